"""layercalc: column diagnostics by layers.

Thickness and heights (hypsometric equation), kinematic omega, w and the surface pressure
tendency, from a small declarative file format (`.layers`), with units checked symbolically.

    >>> import layercalc
    >>> sheet = layercalc.load("worked_cases/midlevel_warming.layers")   # doctest: +SKIP
    >>> result = sheet.evaluate()                                        # doctest: +SKIP
    >>> result.cells["surface_pressure_tendency"]                        # doctest: +SKIP

The package is a pipeline of subpackages (DEVELOPERS.md has the map); this module only
names the public API. The API itself is loaded on first use, so that `import layercalc`
(and `layercalc --help`) stays light.
"""

from layercalc.caution import CAUTION
from layercalc.errors import (
    CycleError, DefinitionError, EvaluationError, InputError, LayercalcError,
    LayercalcSyntaxError, MessageError, Notice, OutputError, SpreadsheetError, UnitError, UnknownNameError,
)
from layercalc.version import __version__

_FROM_API = ("Result", "Sheet", "load", "loads", "problems", "read_soundings", "soundings_text",
             "grid_column", "grid_evaluate")

__all__ = [
    "CAUTION", "CycleError", "DefinitionError", "EvaluationError", "InputError",
    "LayercalcError", "LayercalcSyntaxError", "MessageError", "Notice", "OutputError",
    "Result", "Sheet", "SpreadsheetError", "UnitError", "UnknownNameError", "__version__",
    "grid_column", "grid_evaluate", "load", "loads", "problems", "read_soundings",
    "soundings_text",
]


def __getattr__(name: str):
    if name in _FROM_API:
        from layercalc import api

        return getattr(api, name)
    raise AttributeError(f"module 'layercalc' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
