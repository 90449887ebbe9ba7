"""layercalc: column diagnostics by layers.

Thickness and heights (hypsometric equation), kinematic omega, w and the surface pressure
tendency, from a small declarative file format (`.layers`), with units checked symbolically.

    >>> import layercalc
    >>> sheet = layercalc.load("worked_cases/midlevel_warming.layers")   # doctest: +SKIP
    >>> result = sheet.evaluate()                                        # doctest: +SKIP
    >>> result.cells["surface_pressure_tendency"]                        # doctest: +SKIP
"""

from .errors import (
    CycleError, DefinitionError, EvaluationError, InputError, LayercalcError,
    LayercalcSyntaxError, Notice, OutputError, SpreadsheetError, UnitError, UnknownNameError,
)
from .sheet import CAUTION, Result, Sheet, load, loads, problems

__version__ = "0.1.0"

__all__ = [
    "CAUTION", "CycleError", "DefinitionError", "EvaluationError", "InputError",
    "LayercalcError", "LayercalcSyntaxError", "Notice", "OutputError", "Result", "Sheet",
    "SpreadsheetError", "UnitError", "UnknownNameError", "__version__", "load", "loads",
    "problems",
]
