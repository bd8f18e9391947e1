"""The exceptions of meshbound. Every one is a :class:`MeshboundError`; those about bad input
are also :class:`ValueError`, so code that already catches ``ValueError`` keeps working."""

from __future__ import annotations

from typing import Optional


class MeshboundError(Exception):
    """Any error raised by meshbound."""


class EstimateInputError(MeshboundError, ValueError):
    """Sizes, values or settings an estimator refuses (not finite, not ordered, too few
    meshes, an unknown rule, a formal order that is not positive, ...)."""


class StudyError(MeshboundError, ValueError):
    """A study file, or a file it names, that cannot be read or assessed.

    Attributes:
        file: the file at fault (the study file, or a CSV or history file it names).
        key_path: the key path inside the study, e.g. ``meshes[2].cells`` ("" for the whole
            file).
        line: 1-based line, or None when unknown.
        column: 1-based column, or None when unknown.
        reason: what is wrong and what was expected, without the place.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str = "",
        key_path: str = "",
        line: Optional[int] = None,
        column: Optional[int] = None,
        reason: str = "",
    ) -> None:
        super().__init__(message)
        self.file = file
        self.key_path = key_path
        self.line = line
        self.column = column
        self.reason = reason or message

    def __reduce__(self):  # keeps the attributes across processes (Dask, multiprocessing)
        return (
            _rebuild_study_error,
            (str(self), self.file, self.key_path, self.line, self.column, self.reason),
        )


def _rebuild_study_error(message, file, key_path, line, column, reason):
    return StudyError(
        message, file=file, key_path=key_path, line=line, column=column, reason=reason
    )


class HistoryError(MeshboundError, ValueError):
    """Samples of a monitor history that cannot be reduced (none, not finite, settings out of
    range)."""


class MergeError(MeshboundError, ValueError):
    """Partial summaries made for different columns, mesh sizes or settings."""


class OutputError(MeshboundError, OSError):
    """An output the study asks for could not be produced."""
