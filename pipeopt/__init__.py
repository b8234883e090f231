"""pipeopt: life-cycle cost sizing of pumped liquid lines.

Layers: physics (:mod:`~pipeopt.friction`, :mod:`~pipeopt.fluid`, :mod:`~pipeopt.catalog`,
:mod:`~pipeopt.pressure`, :mod:`~pipeopt.surge`), model (:mod:`~pipeopt.economics`,
:mod:`~pipeopt.costs`, :mod:`~pipeopt.duty`, :mod:`~pipeopt.lifecycle`,
:mod:`~pipeopt.renewal`, :mod:`~pipeopt.replacement`, :mod:`~pipeopt.schedule`), study
(:class:`SizingStudy`, :class:`UpgradeStudy`, :class:`ProgrammeStudy`), presentation
(:mod:`~pipeopt.cli`). Units are parsed at the edge (:mod:`pipeopt.units`); everything below
works in SI.
"""

from . import catalog, friction, units
from .errors import FluidStateError, InputError, PipeoptError
from .fluid import Fluid
from .programme import ProgrammeResult, ProgrammeStudy
from .sizing import SizingResult, SizingStudy
from .units import Quantity, ureg
from .upgrade import UpgradeResult, UpgradeStudy

__version__ = "0.1.0"


def explore(study, debounce: float = 0.15):
    """An interactive explorer of a sizing or upgrade study (see :mod:`pipeopt.widgets`)."""
    from .widgets import explore as _explore

    return _explore(study, debounce)


__all__ = ["Fluid", "SizingStudy", "SizingResult", "UpgradeStudy", "UpgradeResult",
           "ProgrammeStudy", "ProgrammeResult", "Quantity",
           "ureg", "catalog", "friction", "units", "InputError", "PipeoptError",
           "FluidStateError", "explore", "__version__"]
