"""Run the README's tour on the demo data and write (or check) the output blocks it shows.

The README marks what this script manages with HTML comments (invisible on GitHub):

``<!-- tour: run -->``
    before a ```` ```sh ```` block: its ``spotkit`` commands are run, in order, in a scratch
    folder that holds the repository's ``demo_data/`` (lines ending in ``\\`` continue; a line
    starting with ``.`` or ``#`` is skipped; ``spotkit`` runs as ``python -m spotkit`` of
    this tree).
``<!-- tour: run spotkit ... -->``
    the same for a command that the README does not show as such (``make demo``'s).
``<!-- tour: output -->``
    before a ```` ```text ```` block: the block is what the last command run so far printed
    (standard output). When the block's first line is ``$ spotkit ...``, that command is run
    on its own and the block is the line and its output.
``<!-- tour: image NAME -->``
    before a Markdown image ``![...](PATH)``: the file ``NAME`` the commands wrote in the
    scratch folder is copied to ``PATH`` (written only; pictures are not compared).
``<!-- tour: files DIR -->``
    before a ```` ```text ```` block: the sorted list of files a run wrote into ``DIR`` of
    the scratch folder.

Run it after anything changes what the commands print, and commit the README it writes::

    python scripts/readme_tour.py            # rewrite README.md's output blocks and image
    python scripts/readme_tour.py --check    # exit 1 and show a diff when they differ

``tests/test_readme.py`` (slow) runs ``--check``. Trailing blanks are dropped from every
line, in the README and in the output alike.
"""
from __future__ import annotations

import argparse
import difflib
import os
import re
import shlex
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
MARK = re.compile(r"^<!--\s*tour:\s*(run|output|image|files)\s*(.*?)\s*-->\s*$")
FENCE = re.compile(r"^```(\w*)\s*$")
IMAGE = re.compile(r"!\[[^\]]*\]\(([^)\s]+)\)")


@dataclass
class Block:
    """One managed part of the README: its marker, and the lines [start, end) it covers."""

    kind: str
    arg: str
    start: int  # first line of the fenced block (the ``` line), or of the image line
    end: int  # one past the closing ``` line (or the image line)
    lang: str = ""
    body: list[str] = field(default_factory=list)


def parse(lines: list[str]) -> list[Block]:
    """The managed blocks of a README, in order."""
    blocks = []
    i = 0
    while i < len(lines):
        m = MARK.match(lines[i])
        if not m:
            i += 1
            continue
        kind, arg = m.group(1), m.group(2)
        if kind == "run" and arg:  # the command is in the marker itself
            blocks.append(Block(kind, arg, i, i + 1, "sh", [arg]))
            i += 1
            continue
        j = i + 1
        while j < len(lines) and not lines[j].strip():
            j += 1
        if j >= len(lines):
            raise SystemExit(f"README line {i + 1}: marker '{kind}' is followed by nothing")
        if kind == "image":
            if not IMAGE.search(lines[j]):
                raise SystemExit(f"README line {j + 1}: 'tour: image' needs an image line")
            blocks.append(Block(kind, arg, j, j + 1))
            i = j + 1
            continue
        f = FENCE.match(lines[j])
        if not f:
            raise SystemExit(f"README line {j + 1}: 'tour: {kind}' needs a fenced block")
        k = j + 1
        while k < len(lines) and not FENCE.match(lines[k]):
            k += 1
        if k >= len(lines):
            raise SystemExit(f"README line {j + 1}: fenced block never closed")
        blocks.append(Block(kind, arg, j, k + 1, f.group(1), lines[j + 1:k]))
        i = k + 1
    return blocks


def commands(body: list[str]) -> list[str]:
    """The shell commands of a ```sh block (continuations joined, comments dropped)."""
    out, cur = [], ""
    for line in body:
        s = line.rstrip()
        if not cur and (not s.strip() or s.lstrip().startswith(("#", ". ", "source "))):
            continue
        if s.endswith("\\"):
            cur += s[:-1].strip() + " "
            continue
        cur += s.strip()
        cur = re.sub(r"\s+#\s.*$", "", cur)  # a trailing comment
        out.append(cur.strip())
        cur = ""
    return out


def run(command: str, cwd: Path, log) -> str:
    """Run one README command in ``cwd``; its standard output (exit status must be 0)."""
    words = shlex.split(command)
    if not words or words[0] != "spotkit":
        raise SystemExit(f"only spotkit commands are run by the tour, not {command!r}")
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(
        [str(ROOT), *filter(None, [os.environ.get("PYTHONPATH")])]))
    env.pop("COLUMNS", None)
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "spotkit", *words[1:]], cwd=cwd, env=env,
                          capture_output=True, text=True)
    log(f"  {command}  ({time.perf_counter() - t0:.0f} s, exit {done.returncode})")
    if done.returncode != 0:
        raise SystemExit(f"{command!r} failed (exit {done.returncode}):\n{done.stderr}")
    return done.stdout


def _clean(lines) -> list[str]:
    out = [line.rstrip() for line in lines]
    while out and not out[-1]:
        out.pop()
    return out


def tour(readme: Path, workdir: Path, log=print) -> tuple[list[str], dict[Path, Path]]:
    """The README with every managed block as the program prints it now, and the images to
    copy (target in the repository -> file written by the tour)."""
    lines = readme.read_text(encoding="utf-8").splitlines()
    (workdir / "demo_data").symlink_to(ROOT / "demo_data", target_is_directory=True)
    new = list(lines)
    images: dict[Path, Path] = {}
    last = None
    # replace from the end so that earlier line numbers stay valid
    replaced: list[tuple[Block, list[str]]] = []
    for block in parse(lines):
        if block.kind == "run":
            for command in commands(block.body):
                last = run(command, workdir, log)
            continue
        if block.kind == "image":
            name = block.arg or ""
            target = ROOT / IMAGE.search(lines[block.start]).group(1)
            if not (workdir / name).is_file():
                raise SystemExit(f"tour: image {name}: the commands wrote no such file")
            images[target] = workdir / name
            continue
        if block.kind == "files":
            folder = workdir / block.arg
            found = sorted(str(p.relative_to(folder)) for p in folder.rglob("*") if p.is_file())
            replaced.append((block, found))
            continue
        # output
        if block.body and block.body[0].startswith("$ "):
            command = block.body[0][2:].strip()
            replaced.append((block, [block.body[0].rstrip(), *_clean(
                run(command, workdir, log).splitlines())]))
        else:
            if last is None:
                raise SystemExit(f"README line {block.start + 1}: output block before any "
                                 "'tour: run' block")
            replaced.append((block, _clean(last.splitlines())))
    for block, body in reversed(replaced):
        new[block.start + 1:block.end - 1] = body
    return new, images


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--check", action="store_true",
                    help="only compare; exit 1 and print a diff when the README differs")
    ap.add_argument("--readme", type=Path, default=ROOT / "README.md")
    ap.add_argument("--keep", type=Path, metavar="DIR",
                    help="run in DIR (must not exist) and keep what the commands wrote")
    args = ap.parse_args(argv)
    if args.keep:
        args.keep.mkdir(parents=True)
        workdir, cleanup = args.keep, None
    else:
        cleanup = tempfile.TemporaryDirectory(prefix="readme-tour-")
        workdir = Path(cleanup.name)
    try:
        old = args.readme.read_text(encoding="utf-8").splitlines()
        new, images = tour(args.readme, workdir, log=lambda s: print(s, file=sys.stderr))
        changed = old != new
        if args.check:
            if [x.rstrip() for x in old] == [x.rstrip() for x in new]:
                print("README output blocks match the program")
                return 0
            sys.stdout.writelines(difflib.unified_diff(
                [x.rstrip() + "\n" for x in old], [x + "\n" for x in new],
                "README.md", "README.md as the program prints it now"))
            return 1
        if changed:
            args.readme.write_text("\n".join(new) + "\n", encoding="utf-8")
            print(f"rewrote {args.readme}")
        for target, source in images.items():
            shutil.copyfile(source, target)
            print(f"wrote {target.relative_to(ROOT)}")
        return 0
    finally:
        if cleanup is not None:
            cleanup.cleanup()


if __name__ == "__main__":
    sys.exit(main())
