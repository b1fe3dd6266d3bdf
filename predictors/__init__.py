"""Chemistry and physics models of confirm: products, shifts, couplings, spin simulation.

Pure models: no file I/O, no printing, no command line. The workflow package
``confirm`` builds on these; this package never imports ``confirm``.
"""

from predictors.core import (
    CONFIDENCE_LEVELS,
    GEOMETRIES,
    PATHWAYS,
    Candidate,
    ComponentFit,
    LineList,
    MixtureFit,
    ProtonSite,
    RatioEstimate,
    Spectrum,
    SpinSystem,
    Verdict,
    canonical_smiles,
)
from predictors.errors import ChemistryError, ConfirmError, FileFormatError, FitError, InputError

__all__ = [
    "CONFIDENCE_LEVELS",
    "GEOMETRIES",
    "PATHWAYS",
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
    "canonical_smiles",
]
