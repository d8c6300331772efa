"""The ``spotkit`` command line: :func:`main` parses the arguments and calls the library."""

from spotkit.cli.app import main

__all__ = ["main"]
