"""pipeopt: life-cycle cost sizing of pumped liquid lines.

Layers: physics (:mod:`~pipeopt.friction`, :mod:`~pipeopt.fluid`, :mod:`~pipeopt.water`,
:mod:`~pipeopt.catalog`, :mod:`~pipeopt.pressure`, :mod:`~pipeopt.surge`), model
(:mod:`~pipeopt.economics`, :mod:`~pipeopt.costs`, :mod:`~pipeopt.duty`,
:mod:`~pipeopt.lifecycle`, :mod:`~pipeopt.renewal`, :mod:`~pipeopt.replacement`,
:mod:`~pipeopt.schedule`), study (:class:`SizingStudy`, :class:`UpgradeStudy`,
:class:`ProgrammeStudy`, :class:`NetworkStudy`), presentation (:mod:`~pipeopt.cli`). Units
are parsed at the edge (:mod:`pipeopt.units`); everything below works in SI.

The names below are imported on first use (PEP 562): ``import pipeopt`` loads no numerical
library, so the command line answers ``--help`` or a malformed study file at once.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

from .errors import FluidStateError, InputError, PipeoptError

__version__ = "0.1.0"

# public name -> (module, attribute or None for the module itself)
_LAZY = {
    "Fluid": (".fluid", "Fluid"),
    "SizingStudy": (".sizing", "SizingStudy"),
    "SizingResult": (".sizing", "SizingResult"),
    "UpgradeStudy": (".upgrade", "UpgradeStudy"),
    "UpgradeResult": (".upgrade", "UpgradeResult"),
    "ProgrammeStudy": (".programme", "ProgrammeStudy"),
    "ProgrammeResult": (".programme", "ProgrammeResult"),
    "NetworkStudy": (".network", "NetworkStudy"),
    "NetworkResult": (".network", "NetworkResult"),
    "Quantity": (".units", "Quantity"),
    "ureg": (".units", "ureg"),
    "catalog": (".catalog", None),
    "friction": (".friction", None),
    "units": (".units", None),
    "water": (".water", None),
}

if TYPE_CHECKING:  # for type checkers and editors; at run time __getattr__ does this
    from . import catalog, friction, units, water
    from .fluid import Fluid
    from .network import NetworkResult, NetworkStudy
    from .programme import ProgrammeResult, ProgrammeStudy
    from .sizing import SizingResult, SizingStudy
    from .units import Quantity, ureg
    from .upgrade import UpgradeResult, UpgradeStudy


def __getattr__(name: str):
    try:
        module, attribute = _LAZY[name]
    except KeyError:
        raise AttributeError(f"module 'pipeopt' has no attribute {name!r}") from None
    value = importlib.import_module(module, __name__)
    if attribute is not None:
        value = getattr(value, attribute)
    globals()[name] = value  # later lookups do not come back here
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))


def explore(study, debounce: float = 0.15):
    """An interactive explorer of a sizing or upgrade study (see :mod:`pipeopt.widgets`)."""
    from .widgets import explore as _explore

    return _explore(study, debounce)


__all__ = ["Fluid", "SizingStudy", "SizingResult", "UpgradeStudy", "UpgradeResult",
           "ProgrammeStudy", "ProgrammeResult", "NetworkStudy", "NetworkResult", "Quantity",
           "ureg", "catalog", "friction", "units", "water", "InputError", "PipeoptError",
           "FluidStateError", "explore", "__version__"]
