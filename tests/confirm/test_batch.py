"""Batch runs (confirm.batch and ``confirm batch``).

The spectra are JCAMP-DX files written by the project's writer and read back by its
reader; the analysis behind the batch is a small, obviously correct stand-in (non-negative
least squares of the measured intensity on the candidates' model spectra) so these tests
check the batch machinery itself: parallel workers, errors, reruns, summary files.
"""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest
from scipy.optimize import nnls

from confirm.batch import BatchItem, collect_items, read_manifest, run_batch
from confirm.reading import read_measurement, write_jcamp_spectrum
from confirm.results import AnalysisResult, InputRecord
from predictors.core import Candidate, ComponentFit, MixtureFit, Spectrum, Verdict, canonical_smiles
from predictors.errors import FileFormatError, InputError
from tests.confirm._synthetic_results import (
    E_PENTENE,
    PENT_1_ENE,
    SUBSTRATE,
    Z_PENTENE,
    _axis,
    _unit_curve,
    spin_system_of,
)

CANDIDATES = (E_PENTENE, Z_PENTENE, PENT_1_ENE, SUBSTRATE)
SPEC_TEXT = """
product = "C/C=C/CC"
candidates = ["C/C=C\\\\CC", "C=CCCC"]
starting_material = "CC(Br)CCC"
[limits]
max_other_isomer_percent = 2.0
"""


def mixture_spectrum(e: float, z: float, terminal: float, substrate: float, *, seed: int = 7,
                     snr: float = 400.0) -> Spectrum:
    """The measured spectrum of a pentene mixture: the candidates' model spectra in these amounts
    plus white noise (SNR of the tallest point)."""
    amounts = (e, z, terminal, substrate)
    model = sum(x * _unit_curve(s, 400.0) for s, x in zip(CANDIDATES, amounts, strict=True))
    noise = np.random.default_rng(seed).normal(0.0, model.max() / snr, model.size)
    return Spectrum(ppm=_axis(), intensity=model + noise, field_mhz=400.0, solvent="CDCl3")


def nnls_analyze(path, *, candidates=None, substrate=None, reagent=None, solvent=None, temp_c=25.0,
                 field_mhz=None):
    """Stand-in analysis: read the file, fit non-negative amounts of the four candidates."""
    raw = read_measurement(path)
    smiles = [canonical_smiles(s) for s in (candidates or CANDIDATES)]
    basis = np.array([_unit_curve(s, 400.0) for s in smiles]).T
    amounts, _ = nnls(basis, np.asarray(raw.intensity))
    fractions = amounts / amounts.sum()
    model = basis @ amounts
    seen = fractions > 0.015
    shares = fractions / fractions[seen].sum()  # mole fractions among the detected components
    comps = tuple(ComponentFit(candidate=Candidate(smiles=s, pathways=("user",)),
                               mole_fraction=float(x) if d else None, mole_fraction_sd=0.002 if d else 0.0,
                               detection_limit=0.005, detected=bool(d),
                               upper_limit=None if d else float(min(1.0, x + 0.01)))
                  for s, x, d in zip(smiles, shares, seen, strict=True))
    fit = MixtureFit(components=comps, ppm=raw.ppm, model=model, residual=raw.intensity - model,
                     line_width_hz=2.0, quality={"snr": 300.0})
    major = smiles[int(np.argmax(fractions))]
    return AnalysisResult(
        spectrum=Spectrum(ppm=raw.ppm, intensity=raw.intensity, field_mhz=400.0),
        candidates=tuple(c.candidate for c in comps), spin_systems=tuple(spin_system_of(s) for s in smiles),
        fit=fit, verdict=Verdict(summary=f"major {major}", confidence="high", major=major),
        inputs=(InputRecord.from_path(path),))


def _write_spectra(folder, n, *, corrupt_index=None, z_values=None, terminal=0.02):
    folder.mkdir(exist_ok=True)
    paths = []
    for k in range(n):
        z = z_values[k] if z_values else 0.01 + 0.01 * k
        spectrum = mixture_spectrum(0.99 - terminal - z, z, terminal, 0.01, seed=k)
        path = folder / f"lot{k:02d}.jdx"
        if k == corrupt_index:
            path.write_bytes(b"##TITLE=broken\n##JCAMP-DX=5.01\n##XYDATA=(X++(Y..Y))\n1 2 3\x00\x00")
        else:
            write_jcamp_spectrum(spectrum, path)
        paths.append(path)
    return paths


@pytest.fixture(scope="module")
def twenty(tmp_path_factory):
    folder = tmp_path_factory.mktemp("batch") / "spectra"
    paths = _write_spectra(folder, 20, corrupt_index=7)
    manifest = folder.parent / "manifest.csv"
    with open(manifest, "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["id", "spectrum", "candidates"])
        for path in paths:
            writer.writerow([path.stem, f"spectra/{path.name}", " ".join(CANDIDATES)])
    return manifest


@pytest.mark.slow
def test_twenty_spectra_with_one_corrupt_file_in_two_processes(twenty, tmp_path):
    items = read_manifest(twenty)
    assert len(items) == 20 and items[0].candidates == CANDIDATES
    summary = run_batch(items, tmp_path / "out", jobs=2, analyze=nnls_analyze, write_reports=False,
                        progress=False)
    assert summary.counts == {"done": 19, "skipped": 0, "error": 1}
    (bad,) = [o for o in summary.outcomes if o.status == "error"]
    assert bad.item_id == "lot07" and "lot07.jdx" in bad.error
    assert "Traceback" not in bad.error
    with open(summary.summary_csv, newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert [r["id"] for r in rows] == [f"lot{k:02d}" for k in range(20)]
    assert all(r["major"] == E_PENTENE for r in rows if r["status"] == "done")
    result = json.loads((tmp_path / "out" / "lot03" / "result.json").read_text())
    z_fraction = next(c["mole_fraction"] for c in result["components"] if c["smiles"] == Z_PENTENE)
    assert z_fraction == pytest.approx(0.04, abs=0.005)
    # the summary also has one column per ratio and per candidate, read back from result.json
    z_label = next(c.get("name") or c.get("label") or c["smiles"] for c in result["components"]
                   if c["smiles"] == Z_PENTENE)
    lot03 = next(r for r in rows if r["id"] == "lot03")
    assert float(lot03[f"mol %: {z_label}"]) == pytest.approx(100 * z_fraction, abs=0.01)
    assert next(r for r in rows if r["id"] == "lot07")[f"mol %: {z_label}"] == ""
    ratio_columns = [c for c in rows[0] if c.startswith("ratio: ")]
    assert all(lot03[c] == result["ratios"][c[len("ratio: "):]]["ratio"] for c in ratio_columns)
    index = summary.index_html.read_text()
    assert "lot07" in index and "1 error" in index and "decision aid" in index
    # one row per finished item and candidate (and per ratio), read back from result.json
    with open(tmp_path / "out" / "components.csv", newline="") as handle:
        table = list(csv.DictReader(handle))
    assert {r["id"] for r in table} == {f"lot{k:02d}" for k in range(20)} - {"lot07"}
    # and each item's own tables beside its result.json
    with open(tmp_path / "out" / "lot03" / "components.csv", newline="") as handle:
        own = {r["smiles"]: r for r in csv.DictReader(handle)}
    assert float(own[Z_PENTENE]["mole_fraction"]) == pytest.approx(z_fraction, abs=1e-6)
    assert (tmp_path / "out" / "lot03" / "ratios.csv").read_text().startswith("ratio,numerator")
    z_row = next(r for r in table if r["id"] == "lot03" and r["smiles"] == Z_PENTENE)
    assert z_row["detected"] == "yes"
    assert float(z_row["mole_percent"]) == pytest.approx(100 * z_fraction, abs=0.01)


def test_rerun_skips_finished_items_unless_forced(tmp_path):
    folder = tmp_path / "spectra"
    paths = _write_spectra(folder, 3, corrupt_index=2)
    items = [BatchItem(item_id=p.stem, spectrum=p, candidates=CANDIDATES) for p in paths]
    first = run_batch(items, tmp_path / "out", analyze=nnls_analyze, write_reports=False, progress=False)
    assert first.counts == {"done": 2, "skipped": 0, "error": 1}
    again = run_batch(items, tmp_path / "out", analyze=nnls_analyze, write_reports=False, progress=False)
    assert again.counts == {"done": 0, "skipped": 2, "error": 1}  # errors are retried, not skipped
    assert [o.major for o in again.outcomes[:2]] == [o.major for o in first.outcomes[:2]]
    write_jcamp_spectrum(mixture_spectrum(0.5, 0.5, 0.0, 0.0), paths[1])  # input changed
    changed = run_batch(items, tmp_path / "out", analyze=nnls_analyze, write_reports=False, progress=False)
    assert [o.status for o in changed.outcomes] == ["skipped", "done", "error"]
    forced = run_batch(items, tmp_path / "out", force=True, analyze=nnls_analyze, write_reports=False,
                       progress=False)
    assert forced.counts == {"done": 2, "skipped": 0, "error": 1}


def test_folder_with_a_shared_spec_runs_qc_and_writes_reports(tmp_path, run_cli, monkeypatch):
    from confirm.commands import batch as batch_command

    folder = tmp_path / "spectra"
    _write_spectra(folder, 2, z_values=(0.005, 0.05), terminal=0.0)
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC_TEXT)
    monkeypatch.setattr(batch_command, "_analyze", nnls_analyze)
    out = run_cli("batch", folder, "--out", tmp_path / "out", "--spec", spec, "--json")
    assert out.exit_code == 1, out.stderr  # one lot does not pass
    data = json.loads(out.stdout)
    assert data["counts"]["done"] == 2
    assert [i["qc_status"] for i in data["items"]] == ["PASS", "FAIL"]  # 0.5 % and 5 % of Z, limit 2 %
    assert (tmp_path / "out" / "lot00" / "report.html").read_text().count("QC PASS") == 1
    assert json.loads((tmp_path / "out" / "lot00" / "audit.json").read_text())["qc"]["status"] == "PASS"
    assert 'href="lot00/report.html"' in (tmp_path / "out" / "index.html").read_text()
    text = run_cli("batch", folder, "--out", tmp_path / "out", "--spec", spec)
    assert text.exit_code == 1 and "2 skipped" in text.stdout and "decision aid" in text.stdout
    assert text.stdout.splitlines()[-1] == "Not all items passed: 1 did not pass their QC check (exit 1)."
    assert data["caution"].startswith("This result is a decision aid")


def test_bad_batch_input(tmp_path, run_cli):
    with pytest.raises(FileFormatError, match="does not exist"):
        collect_items(tmp_path / "nothing")
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(InputError, match="holds no spectra"):
        collect_items(empty)
    manifest = tmp_path / "m.csv"
    manifest.write_text("path,substrate\na.jdx,CCBr\n")
    with pytest.raises(InputError, match="'spectrum' column"):
        read_manifest(manifest)
    manifest.write_text("spectrum,temp_c\na.jdx,hot\n")
    with pytest.raises(InputError, match="temp_c"):
        read_manifest(manifest)
    out = run_cli("batch", empty, "--out", tmp_path / "o")
    assert out.exit_code == 2 and out.stderr.startswith("error: batch input")
    out = run_cli("batch", empty, "--out", tmp_path / "o", "--jobs", "0")
    assert out.exit_code == 2 and "Traceback" not in out.stderr


def test_item_without_candidates_is_an_error_row(tmp_path):
    path = _write_spectra(tmp_path / "s", 1)[0]
    summary = run_batch([BatchItem(item_id="x", spectrum=path)], tmp_path / "out", analyze=nnls_analyze,
                        progress=False)
    assert summary.outcomes[0].status == "error"
    assert "no substrate/reagent, candidates or specification" in summary.outcomes[0].error


def test_duplicate_ids_are_made_unique(tmp_path):
    manifest = tmp_path / "m.csv"
    manifest.write_text("id,spectrum\nlot 1,a.jdx\nlot 1,b.jdx\n")
    assert [i.item_id for i in read_manifest(manifest)] == ["lot_1", "lot_1_2"]


def test_manifest_rows_with_their_own_specification(tmp_path):
    _write_spectra(tmp_path / "spectra", 2, z_values=(0.005, 0.05), terminal=0.0)
    (tmp_path / "spec.toml").write_text(SPEC_TEXT)
    rows = ["id,spectrum,spec", "a,spectra/lot00.jdx,spec.toml", "b,spectra/lot01.jdx,nope.toml"]
    (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
    items = read_manifest(tmp_path / "m.csv")
    summary = run_batch(items, tmp_path / "out", analyze=nnls_analyze, write_reports=False, progress=False)
    assert [o.status for o in summary.outcomes] == ["done", "error"]
    assert summary.outcomes[0].qc_status == "PASS"
    assert "nope.toml" in summary.outcomes[1].error


def test_a_manifest_row_says_which_nuclei_were_decoupled(tmp_path):
    _write_spectra(tmp_path / "spectra", 2, z_values=(0.005, 0.05), terminal=0.0)
    (tmp_path / "spec.toml").write_text(SPEC_TEXT)
    cands = ";".join(CANDIDATES)
    rows = ["id,spectrum,candidates,spec,decoupled", f"a,spectra/lot00.jdx,{cands},,19F",
            "b,spectra/lot01.jdx,,spec.toml,F19;31P"]
    (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
    items = read_manifest(tmp_path / "m.csv")
    assert [i.decoupled for i in items] == [("19F",), ("19F", "31P")]
    log = tmp_path / "decoupled.log"

    def recording(path, *, decoupled=(), nmr_solvent=None, **kwargs):  # items run in child processes
        with log.open("a", encoding="utf-8") as fh:
            fh.write(f"{path.name} {' '.join(decoupled)}\n")
        return nnls_analyze(path, **kwargs)

    summary = run_batch(items, tmp_path / "out", analyze=recording, write_reports=False, progress=False)
    assert [o.status for o in summary.outcomes] == ["done", "done"]
    assert sorted(log.read_text(encoding="utf-8").splitlines()) == ["lot00.jdx 19F", "lot01.jdx 19F 31P"]
    (tmp_path / "bad.csv").write_text("spectrum,candidates,decoupled\nspectra/lot00.jdx,CC,13C\n")
    with pytest.raises(InputError, match="manifest row 2: decoupled: expected one of 19F, 31P"):
        read_manifest(tmp_path / "bad.csv")
