"""Batch runs: many spectra, in parallel processes or on a Dask cluster, with a summary table and an
HTML index.

Input is either a manifest (CSV with a ``spectrum`` column and, per row, ``substrate`` +
``reagent`` or ``candidates``, optional ``id``, ``reaction_solvent``, ``nmr_solvent``, ``temp_c``,
``field_mhz``, ``spec``, ``decoupled``) or a folder of spectra that all share one QC specification
(:mod:`confirm.batch.manifest`). Each item gets its own folder in the output with its report,
JSON result (and QC audit record); a file ``outcome.json`` written last marks it finished
(:mod:`confirm.batch.finished`). A bad file is reported as an error and the rest go on; a rerun
skips an item only when it is finished on identical work. One item runs in
:mod:`confirm.batch.run_item`; :func:`run_batch` (:mod:`confirm.batch.runner`) runs them all in
this process, in worker processes, or on a Dask cluster (:mod:`confirm.batch.dask_runner`), and
writes the summary files (:mod:`confirm.batch.summary`).
"""

from confirm.batch.finished import ItemOutcome, item_fingerprint
from confirm.batch.manifest import (
    MANIFEST_COLUMNS,
    RESERVED_IDS,
    BatchItem,
    collect_batch,
    collect_items,
    items_from_folder,
    read_manifest,
    scan_folder,
)
from confirm.batch.runner import run_batch
from confirm.batch.summary import BatchSummary, write_summary

__all__ = [
    "BatchItem",
    "ItemOutcome",
    "BatchSummary",
    "MANIFEST_COLUMNS",
    "RESERVED_IDS",
    "read_manifest",
    "items_from_folder",
    "scan_folder",
    "collect_items",
    "collect_batch",
    "item_fingerprint",
    "run_batch",
    "write_summary",
]
