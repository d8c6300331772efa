"""Run benchmark scripts on this working tree and on an earlier revision, side by side.

For a change that must not make anything slower (a refactor, a library swapped in), each
chosen ``bench_*.py`` runs on both trees, alternately and ``--repeat`` times (runs on a
shared VM vary by 20 % even when it is idle, so the fastest of each is compared). The old
revision is checked out with ``git worktree`` into a temporary folder and run with its own
benchmark script on ``PYTHONPATH``, in the same virtual environment. Every figure the
scripts print in seconds or MB (or as a decimal number in a table) is lined up with its
counterpart:

    .venv/bin/python benchmarks/against_revision.py --rev 1e348bd \\
        --bench compare="--pairs 200000 --boot 100" --bench simulate="--days 1"

prints per line ``revision  this tree  ratio`` (ratio > 1: this tree is slower or larger).
"""
from __future__ import annotations

import argparse
import os
import re
import shlex
import subprocess
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
NUMBER = re.compile(r"(?<![\w.])(\d[\d,]*(?:\.\d+)?)\s*(s|MB|MiB|GB|GiB)\b")
# a table cell: a decimal number standing alone (the column heading says its unit)
CELL = re.compile(r"(?<![\w.,])(\d+\.\d+)(?![\w.,])")


def figures(text: str) -> dict[str, tuple[float, str]]:
    """Map each printed line's label (the line with its numbers blanked) to its figures."""
    out = {}
    for line in text.splitlines():
        # a target ("target < 30 s") is not a measurement
        found = [m.groups() for m in NUMBER.finditer(line)
                 if not re.search(r"(target|<|<=|>=)\s*$", line[:m.start()])]
        if not found:
            found = [(m.group(1), "") for m in CELL.finditer(line)]
        if not found:
            continue
        label = CELL.sub("#", NUMBER.sub(lambda m: "#" + m.group(2), line)).strip()
        label = re.sub(r"\d[\d,.]*", "#", label)
        for i, (value, unit) in enumerate(found):
            key = label if len(found) == 1 else f"{label} [{i + 1}]"
            out[key] = (float(value.replace(",", "")), unit)
    return out


def run(tree: Path, script: str, args: str) -> str:
    env = dict(os.environ, PYTHONPATH=str(tree))
    proc = subprocess.run([sys.executable, str(tree / "benchmarks" / script), *shlex.split(args)],
                          cwd=tempfile.gettempdir(), env=env, capture_output=True, text=True)
    if proc.returncode != 0:
        raise SystemExit(f"{script} on {tree} failed:\n{proc.stdout}\n{proc.stderr}")
    return proc.stdout


def best(runs: list[dict]) -> dict:
    keys = set.intersection(*(set(r) for r in runs)) if runs else set()
    return {k: (min(r[k][0] for r in runs), runs[0][k][1]) for k in keys}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rev", required=True, help="the earlier revision (commit, tag, branch)")
    ap.add_argument("--bench", action="append", required=True, metavar="NAME=ARGS",
                    help="benchmark bench_NAME.py with these arguments (repeatable)")
    ap.add_argument("--repeat", type=int, default=3)
    opt = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        old = Path(tmp) / "old"
        subprocess.run(["git", "-C", str(REPO), "worktree", "add", "--detach", "-q", str(old),
                        opt.rev], check=True)
        try:
            for item in opt.bench:
                name, _, args = item.partition("=")
                script = f"bench_{name}.py"
                runs = {"old": [], "new": []}
                for _ in range(opt.repeat):
                    runs["old"].append(figures(run(old, script, args)))
                    runs["new"].append(figures(run(REPO, script, args)))
                b_old, b_new = best(runs["old"]), best(runs["new"])
                print(f"== {script} {args}  (fastest of {opt.repeat}, alternating)")
                print(f"   {'revision ' + opt.rev[:10]:>18} {'this tree':>12} {'ratio':>6}  figure")
                for key in sorted(set(b_old) & set(b_new)):
                    (v_old, unit), (v_new, _) = b_old[key], b_new[key]
                    ratio = v_new / v_old if v_old else float("nan")
                    print(f"   {v_old:>15,.2f} {unit:<2} {v_new:>9,.2f} {unit:<2} {ratio:>6.2f}"
                          f"  {key}")
                for key in sorted(set(b_old) ^ set(b_new)):
                    print(f"   (only on one side) {key}")
        finally:
            subprocess.run(["git", "-C", str(REPO), "worktree", "remove", "--force", str(old)],
                           check=False)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
