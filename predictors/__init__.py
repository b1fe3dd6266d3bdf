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

# Models are imported on first use (PEP 562) so that ``import predictors`` stays
# cheap for the command line; the names below are the public API.
_LAZY = {
    "parse_molecule": "predictors.molecules",
    "strip_counter_ions": "predictors.molecules",
    "enumerate_products": "predictors.products",
    "ProductSet": "predictors.products",
    "get_reagent": "predictors.reagents",
    "list_reagents": "predictors.reagents",
    "perceive_substrate": "predictors.substrate",
    "predict_spin_system": "predictors.prediction",
    "first_order_multiplicity": "predictors.prediction",
    "without_x_couplings": "predictors.hetero_couplings",
    "simulate_arrays": "predictors.spin",
    "simulate_lines": "predictors.spin",
    "render_lines": "predictors.spin",
    "render_sites": "predictors.spin",
    "model_spectrum": "predictors.spin",
}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'predictors' has no attribute {name!r}")


__all__ = [*sorted(_LAZY),
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
