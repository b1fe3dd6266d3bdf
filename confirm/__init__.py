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

# Workflow functions are imported on first use (PEP 562) so that the command
# line starts quickly; the names below are the public API.
_LAZY = {
    "read_measurement": "confirm.reading",
    "write_jcamp_spectrum": "confirm.reading",
    "ProcessingOptions": "confirm.processing",
    "ProcessedSpectrum": "confirm.processing",
    "process_measurement": "confirm.processing",
    "load_spectrum": "confirm.processing",
    "solvent_signals": "confirm.solvents",
    "load_structure": "confirm.structures",
    "FitOptions": "confirm.fitting",
    "fit_mixture": "confirm.fitting",
    "decide": "confirm.verdict",
    "analyze_path": "confirm.analysis",
    "analyze_spectrum": "confirm.analysis",
    "analyze_peak_list": "confirm.analysis",
    "AnalysisResult": "confirm.results",
    "InputRecord": "confirm.results",
    "write_html_report": "confirm.report_html",
    "export_result_files": "confirm.report_html",
    "QcSpec": "confirm.qc",
    "QcResult": "confirm.qc",
    "read_spec": "confirm.qc",
    "evaluate_qc": "confirm.qc",
    "run_qc": "confirm.qc",
    "audit_record": "confirm.qc",
    "BatchItem": "confirm.batch",
    "collect_items": "confirm.batch",
    "run_batch": "confirm.batch",
    "InternalStandard": "confirm.qnmr",
    "nmr_yield": "confirm.qnmr",
    "yield_from_result": "confirm.qnmr",
    "analyze_with_standard": "confirm.qnmr",
    "Budget": "confirm.budget",
    "BudgetExceeded": "confirm.budget",
}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'confirm' has no attribute {name!r}")


__all__ = [
    "__version__",
    *sorted(_LAZY),
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
