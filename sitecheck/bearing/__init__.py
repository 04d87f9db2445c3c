"""The engineering core: re-check a beam or lintel bearing on masonry.

Pure: no Flask, no SQL, no files, no printing. Frozen inputs in, frozen results out, in N,
mm and N/mm², every step of the calculation recorded with its clause.
"""

from .basis import (
    BASES,
    BS5628,
    EC6_UK,
    SOURCES,
    CodeBasis,
    basis_from_dict,
    basis_named,
    bs5628,
    ec6_uk_na,
)
from .errors import InputError
from .inputs import ACROSS, IN_LINE, Beam, BearingInput, Load, Masonry, Padstone, Wall
from .recheck import check_bearing
from .trace import BearingResult, Check, Spread, Step
from .validate import input_errors, validate

__all__ = [
    "ACROSS",
    "BASES",
    "BS5628",
    "EC6_UK",
    "IN_LINE",
    "SOURCES",
    "Beam",
    "BearingInput",
    "BearingResult",
    "Check",
    "CodeBasis",
    "InputError",
    "Load",
    "Masonry",
    "Padstone",
    "Spread",
    "Step",
    "Wall",
    "basis_from_dict",
    "basis_named",
    "bs5628",
    "check_bearing",
    "ec6_uk_na",
    "input_errors",
    "validate",
]
