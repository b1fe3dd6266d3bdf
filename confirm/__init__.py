"""confirm: prove from a 1H NMR spectrum which elimination or substitution product formed.

Workflow package: reading and processing measured data, fitting mixtures,
verdicts, reports and the command line. Models live in :mod:`predictors`.
"""

from predictors.core import (
    Candidate,
    ComponentFit,
    LineList,
    MixtureFit,
    ProtonSite,
    RatioEstimate,
    Spectrum,
    SpinSystem,
    Verdict,
)
from predictors.errors import ChemistryError, ConfirmError, FileFormatError, FitError, InputError

__version__ = "0.1.0"

__all__ = [
    "__version__",
    "Candidate",
    "ChemistryError",
    "ComponentFit",
    "ConfirmError",
    "FileFormatError",
    "FitError",
    "InputError",
    "LineList",
    "MixtureFit",
    "ProtonSite",
    "RatioEstimate",
    "SpinSystem",
    "Spectrum",
    "Verdict",
]
