"""The exception tree of capbench.

Every error capbench raises derives from :class:`CapbenchError`. Each subclass also
inherits the builtin it means, so ``except ValueError`` keeps working for callers who do
not know capbench. Messages say what is wrong, with the value and its unit, and what
would be valid. The offending values travel as attributes, and the exceptions pickle
(they cross process pools and Dask workers).
"""

from __future__ import annotations

from typing import Any


class CapbenchError(Exception):
    """Root of all errors raised by capbench."""

    def __init__(self, message: str, **details: Any) -> None:
        super().__init__(message)
        self.message = message
        self.details = details
        for key, value in details.items():
            setattr(self, key, value)

    def __reduce__(self):
        return (_rebuild, (type(self), self.message, self.details))

    def __str__(self) -> str:
        return self.message


def _rebuild(cls, message, details):
    return cls(message, **details)


class InputError(CapbenchError, ValueError):
    """A value given to capbench is out of range, of the wrong unit, or malformed."""


class GeometryError(InputError):
    """A fixture cross-section cannot exist or cannot be meshed as described."""


class FileFormatError(InputError):
    """A fixture, measurement or readings file does not follow its schema."""


class SolverError(CapbenchError, RuntimeError):
    """The field solve failed, did not converge, or ran out of its budget."""


class ExtractionError(CapbenchError, ValueError):
    """Readings cannot be turned into a permittivity (no physical root, impossible order)."""


class StoreError(CapbenchError, RuntimeError):
    """The bench log could not be read or written."""


class CapbenchWarning(UserWarning):
    """A legal but suspicious input (a gap a thousand times smaller than its electrode)."""
