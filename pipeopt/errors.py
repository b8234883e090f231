"""Exception and warning classes of pipeopt.

Every error the package raises on bad input is a :class:`InputError`, which is also a
:class:`ValueError`, so callers may catch either. The message always names the parameter (or the
study-file key), the rule that was broken and the value that was received.

Policy on NaN: the physics functions never return a silent NaN. Invalid input raises; a point that
is valid but outside a correlation's recommended range is computed and flagged with a warning
(for example :class:`TransitionalFlowWarning`), which callers can silence with :mod:`warnings`.
"""

from __future__ import annotations

__all__ = [
    "PipeoptError",
    "InputError",
    "FluidStateError",
    "OutputError",
    "IncompleteResultSet",
    "PipeoptWarning",
    "TransitionalFlowWarning",
    "RangeWarning",
]


class PipeoptError(Exception):
    """Base class of every exception raised by pipeopt."""


class InputError(PipeoptError, ValueError):
    """An input broke a documented rule (wrong unit, out of range, wrong type)."""


class FluidStateError(InputError):
    """A requested fluid state is not a liquid, or the fluid is unknown to the property library."""


class OutputError(InputError):
    """An output folder cannot take a result set: not writable, full, locked by another run,
    not empty without ``--force``, or an output would replace a study input."""


class IncompleteResultSet(OutputError):
    """A folder holds no complete result set: its manifest is missing, marked incomplete, or a
    listed file is missing or differs from its recorded size and SHA-256."""


class PipeoptWarning(UserWarning):
    """Base class of pipeopt's warnings."""


class TransitionalFlowWarning(PipeoptWarning):
    """Some points fell in the laminar-turbulent transition band (2000 <= Re < 4000)."""


class RangeWarning(PipeoptWarning):
    """A correlation was used outside the range over which its authors validated it."""
