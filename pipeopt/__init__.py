"""pipeopt: life-cycle cost sizing of pumped liquid lines.

The physics layer (:mod:`pipeopt.friction`, :mod:`pipeopt.fluid`) computes friction loss and
fluid properties exactly; :mod:`pipeopt.units` parses user input with units at the edge.
"""

from . import friction, units
from .errors import FluidStateError, InputError, PipeoptError
from .fluid import Fluid
from .units import Quantity, ureg

__version__ = "0.1.0"

__all__ = ["Fluid", "Quantity", "ureg", "friction", "units", "InputError", "PipeoptError",
           "FluidStateError", "__version__"]
