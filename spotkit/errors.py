"""Exceptions and warnings raised by spotkit.

Every error spotkit raises on purpose derives from :class:`SpotkitError` and also from the
matching built-in, so ``except ValueError`` keeps working for callers who do not know
spotkit. The CLI maps :class:`InputError` (bad data) to exit code 1 and
:class:`UsageError` (bad arguments) to exit code 2.
"""
from __future__ import annotations


class SpotkitError(Exception):
    """Base class of all spotkit errors."""


class InputError(SpotkitError, ValueError):
    """The input data cannot be used (CLI exit code 1).

    The message names the file, and where it can, the row and field.
    """


class NotASpotTableError(InputError):
    """A file is not a spot table at all (binary, HTML, empty...)."""


class MappingError(InputError):
    """Column headings could not be matched onto the glossary unambiguously."""


class MostlyRejectedError(InputError):
    """A run accepted no row, or set aside more than the allowed share of a file's rows
    for one reason; nothing was written.

    Attributes
    ----------
    summary : spotkit.io.ingest.IngestSummary
        The counts of the run.
    result : spotkit.io.ingest.IngestResult or None
        What :func:`spotkit.io.ingest.read_spots` read (None from a streamed ingest).
    """

    def __init__(self, message: str, summary=None, result=None):
        super().__init__(message)
        self.summary = summary
        self.result = result


class OutputError(SpotkitError, OSError):
    """An output cannot be written (folder missing rights, read-only, full; CLI exit 1)."""


class LocatorError(SpotkitError, ValueError):
    """A Maidenhead locator is malformed."""


class UsageError(SpotkitError, ValueError):
    """Arguments are wrong or inconsistent (CLI exit code 2)."""


class NoPairsError(InputError):
    """A comparison found nothing to compare."""


class SpotkitWarning(UserWarning):
    """Data are suspicious but usable."""


__all__ = [
    "SpotkitError", "InputError", "NotASpotTableError", "MappingError", "MostlyRejectedError",
    "OutputError", "LocatorError",
    "UsageError", "NoPairsError", "SpotkitWarning",
]
