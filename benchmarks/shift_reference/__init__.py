"""Real compounds with assigned 1H shifts: the reference set of ``benchmarks.shift_accuracy_real``.

:func:`reference_entries` gathers the data modules (``benzenoid``, ``heteroaromatic``,
``aliphatic``), the project's existing shift data mapped to atoms (``reused``) and the
depositors' NMReDATA assignments of the real spectra (``nmredata``, read at run time). A compound
that appears twice (same canonical SMILES) is kept once, from the first source in that order:
NMReDATA, data modules, corpus, sp3 reference, alkene reference. None of these numbers comes from
our own predictor.
"""

from __future__ import annotations

from pathlib import Path

from benchmarks.shift_reference.model import ShiftEntry
from benchmarks.shift_split import canonical, half_of

__all__ = ["ShiftEntry", "reference_entries"]


def reference_entries(
    real_spectra: Path | None = None, *, half: str | None = None
) -> tuple[list[ShiftEntry], list[str]]:
    """Every reference compound, checked and deduplicated, and the reasons for anything skipped.

    Parameters
    ----------
    real_spectra : Path, optional
        Folder of the real spectra (default: ``$CONFIRM_REAL_SPECTRA`` or ``../shared/real_spectra``).
    half : str, keyword-only, optional
        ``"fitting"`` or ``"held-out"`` (:func:`benchmarks.shift_split.half_of`); None: both.
    """
    from benchmarks.shift_reference import aliphatic, benzenoid, heteroaromatic
    from benchmarks.shift_reference.nmredata import nmredata_entries
    from benchmarks.shift_reference.reused import alkene_entries, corpus_entries, sp3_entries

    real, skipped = nmredata_entries(real_spectra)
    groups = [
        real,
        list(benzenoid.ENTRIES),
        list(heteroaromatic.ENTRIES),
        list(aliphatic.ENTRIES),
        corpus_entries(),
        sp3_entries(),
        alkene_entries(),
    ]
    seen: dict[str, str] = {}
    keys: set[str] = set()
    out = []
    for item in (e for group in groups for e in group):
        item.check()
        if item.key in keys:
            raise ValueError(f"duplicate key {item.key}")
        keys.add(item.key)
        canon = canonical(item.smiles)
        if canon in seen:
            continue
        seen[canon] = item.key
        if half is None or half_of(item.smiles) == half:
            out.append(item)
    return out, skipped
