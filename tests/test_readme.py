"""The README's Python example runs as written, from the repository's top folder."""
from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def test_readme_python_blocks_run():
    blocks = re.findall(r"```python\n(.*?)```", (REPO / "README.md").read_text(), re.S)
    assert blocks, "the README shows the library in a ```python block"
    for code in blocks:
        proc = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True,
                              text=True, timeout=300)
        assert proc.returncode == 0, proc.stderr
        # the example's own claims: every row accounted for, and a verdict per group
        assert "accepted + rejected + duplicates = rows read: yes" in proc.stdout
        assert "B is" in proc.stdout and "on 10 m" in proc.stdout
