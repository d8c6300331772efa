"""``python -m spotkit``: the same command line as ``spotkit`` (see :mod:`spotkit.cli`)."""
import sys

from spotkit.cli import main

if __name__ == "__main__":
    sys.exit(main())
