"""Re-apply four deliberate statistical bugs to a copy of spotkit and check the tests catch each.

Each mutant is a small wrapper appended to the end of one module of a temporary copy of the
package (the worktree itself is never touched), so it does not depend on the module's
internal text: it rebinds a public function by name. The copy's own tests/ and
pyproject.toml are run against the mutated package (``PYTHONPATH`` first on the copy), and
each mutant must make at least one of its named tests fail. The unmutated copy is run first:
its named tests must all pass, or a "kill" would mean nothing.

The four bugs (issue 15, "Tests that would have caught this"):

* ``pairs-not-receivers``: every pair is its own bootstrap cluster (resampling pairs instead
  of receivers), in :func:`spotkit.compare.grouping.summarise_pairs`;
* ``bonferroni``: Bonferroni in place of Benjamini-Hochberg, in
  :func:`spotkit.stats.paired.benjamini_hochberg`;
* ``ninety-as-95``: a 90 % interval labelled 95 %, in
  :func:`spotkit.stats.bootstrap.bootstrap_interval`;
* ``se-plus-20``: the censored fit's standard error of ``mu`` inflated by 20 %, in
  :func:`spotkit.stats.censored.censored_normal_mle` (its result must stay a dataclass with a
  ``se_mu`` field).

Run ``python benchmarks/mutants.py`` from the repository root (about a minute); it prints one
line per mutant and exits 1 if one survives or the baseline fails.
"""
from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


@dataclass(frozen=True)
class Mutant:
    name: str
    module: str  # path of the module in the package copy
    anchors: tuple  # strings the module must contain for the patch to mean what it says
    patch: str  # code appended to the module
    killers: tuple  # test node ids; at least one must fail


MUTANTS = (
    Mutant(
        "pairs-not-receivers", "spotkit/compare/grouping.py",
        ("def summarise_pairs(",),
        '''
# --- mutant: every pair its own cluster (resampling pairs instead of receivers) ---
_mutant_summarise_pairs = summarise_pairs


def summarise_pairs(pairs, *args, **kwargs):
    pairs = pairs.copy()
    pairs[C.CLUSTER] = np.arange(len(pairs)).astype(str)
    return _mutant_summarise_pairs(pairs, *args, **kwargs)
''',
        ("tests/stats/test_calibration.py::test_receiver_interval_is_wider_than_a_pairs_only_one",
         "tests/viz/test_mapdata.py::test_per_receiver_cells_resample_time_blocks_not_pairs")),
    Mutant(
        "bonferroni", "spotkit/stats/paired.py",
        ("def benjamini_hochberg(",),
        '''
# --- mutant: Bonferroni in place of Benjamini-Hochberg ---
def benjamini_hochberg(p_values):
    p = np.asarray(p_values, dtype=float)
    m = int(np.sum(~np.isnan(p)))
    return np.where(np.isnan(p), np.nan, np.minimum(p * m, 1.0))
''',
        ("tests/stats/test_paired.py::test_benjamini_hochberg_matches_statsmodels_with_nan",
         "tests/stats/test_paired.py::test_benjamini_hochberg_paper_example",
         "tests/compare/test_verdict.py::test_p_adjusted_is_benjamini_hochberg_of_the_groups")),
    Mutant(
        "ninety-as-95", "spotkit/stats/bootstrap.py",
        ("def bootstrap_interval(",),
        '''
# --- mutant: a 90 % interval labelled 95 % ---
_mutant_bootstrap_interval = bootstrap_interval


def bootstrap_interval(replicates, estimate, confidence=0.95, method="percentile"):
    return _mutant_bootstrap_interval(replicates, estimate, confidence - 0.05, method)
''',
        ("tests/stats/test_calibration.py::"
         "test_cluster_bootstrap_covers_with_receiver_heterogeneity",)),
    Mutant(
        "se-plus-20", "spotkit/stats/censored.py",
        ("def censored_normal_mle(", "se_mu"),
        '''
# --- mutant: the standard error of mu inflated by 20 % ---
import dataclasses as _mutant_dataclasses  # noqa: E402

_mutant_censored_normal_mle = censored_normal_mle


def censored_normal_mle(*args, **kwargs):
    fit = _mutant_censored_normal_mle(*args, **kwargs)
    return _mutant_dataclasses.replace(fit, se_mu=fit.se_mu * 1.2)
''',
        ("tests/stats/test_calibration.py::test_censored_se_is_the_inverse_observed_information",
         "tests/stats/test_calibration.py::test_censored_se_matches_the_spread_of_the_fits")),
)


def _copy_tree(dest: Path, root: Path = ROOT) -> None:
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", ".ipynb_checkpoints")
    shutil.copytree(root / "spotkit", dest / "spotkit", ignore=ignore)
    shutil.copytree(root / "tests", dest / "tests", ignore=ignore)
    shutil.copy2(root / "pyproject.toml", dest / "pyproject.toml")


def _failed(junit: Path) -> set[str]:
    """Node ids (``path.py::name``) of the failed or erroring test cases of a JUnit file."""
    out = set()
    for case in ET.parse(junit).getroot().iter("testcase"):
        if case.find("failure") is not None or case.find("error") is not None:
            path = case.get("classname", "").replace(".", "/") + ".py"
            out.add(f"{path}::{case.get('name')}")
    return out


def _run_tests(copy: Path, node_ids, tag: str) -> tuple[set[str], int, str]:
    junit = copy / f"junit-{tag}.xml"
    env = dict(os.environ, PYTHONPATH=str(copy))
    cmd = [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "-n", "0",
           "-o", "addopts=", "--junitxml", str(junit), *node_ids]
    proc = subprocess.run(cmd, cwd=copy, env=env, capture_output=True, text=True,
                          timeout=900)
    failed = _failed(junit) if junit.exists() else set(node_ids)
    return failed, proc.returncode, proc.stdout[-3000:] + proc.stderr[-2000:]


def run_mutants(root: Path = ROOT, mutants=MUTANTS, verbose: bool = False) -> list[dict]:
    """Run the baseline and every mutant; one dict per run (``name``, ``killed_by``,
    ``survived``, ``seconds``; the baseline's ``failed``)."""
    rows = []
    all_ids = sorted({k for m in mutants for k in m.killers})
    with tempfile.TemporaryDirectory(prefix="spotkit-mutants-") as tmp:
        base = Path(tmp) / "baseline"
        _copy_tree(base, root)
        t0 = time.perf_counter()
        failed, code, log = _run_tests(base, all_ids, "baseline")
        rows.append({"name": "baseline", "failed": sorted(failed), "returncode": code,
                     "seconds": time.perf_counter() - t0, "log": log if failed else ""})
        for m in mutants:
            copy = Path(tmp) / m.name
            _copy_tree(copy, root)
            target = copy / m.module
            text = target.read_text(encoding="utf-8")
            missing = [a for a in m.anchors if a not in text]
            if missing:
                rows.append({"name": m.name, "error": f"anchor(s) {missing} not in {m.module}",
                             "killed_by": [], "survived": True, "seconds": 0.0})
                continue
            target.write_text(text + "\n" + m.patch, encoding="utf-8")
            t0 = time.perf_counter()
            failed, code, log = _run_tests(copy, list(m.killers), m.name)
            killed = sorted(set(m.killers) & failed)
            rows.append({"name": m.name, "module": m.module, "killed_by": killed,
                         "survived": not killed, "seconds": time.perf_counter() - t0,
                         "log": log if verbose or not killed else ""})
            shutil.rmtree(copy, ignore_errors=True)
    return rows


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--verbose", action="store_true", help="print the pytest output too")
    args = ap.parse_args(argv)
    rows = run_mutants(verbose=args.verbose)
    bad = False
    for r in rows:
        if r["name"] == "baseline":
            ok = not r["failed"]
            bad |= not ok
            print(f"{'baseline':22s} {'ok' if ok else 'FAILED ' + ', '.join(r['failed'])}"
                  f"  ({r['seconds']:.0f} s)")
        else:
            bad |= r["survived"]
            what = (r.get("error") or "SURVIVED") if r["survived"] else \
                "killed by " + ", ".join(k.split("::")[1] for k in r["killed_by"])
            print(f"{r['name']:22s} {what}  ({r['seconds']:.0f} s)")
        if r.get("log") and (args.verbose or bad):
            print(r["log"])
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
