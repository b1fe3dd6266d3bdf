"""No output overwrites or writes into an input; outputs never collide; exit codes of the environment.

Every case is refused before any analysis runs, so these tests are fast; each also checks that
the input's bytes are unchanged afterwards.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import signal
import subprocess
import sys
import time
import warnings
from pathlib import Path

import numpy as np
import pytest

from confirm._files import atomic_path, check_file_targets, check_outputs, write_text_atomic
from confirm.commands import demo as demo_command
from confirm.commands.demo import sample_files
from predictors.errors import InputError

ANETHOLES = ["C/C=C/c1ccc(OC)cc1", "C/C=C\\c1ccc(OC)cc1"]
SPEC_TEXT = 'product = "C/C=C/c1ccc(OC)cc1"\ncandidates = ["C/C=C\\\\c1ccc(OC)cc1"]\n'


def _digest(path: Path) -> str:
    if path.is_dir():
        return hashlib.sha256(b"".join(_digest(p).encode() for p in sorted(path.rglob("*")) if p.is_file())
                              + str(sorted(p.name for p in path.rglob("*"))).encode()).hexdigest()
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture
def data(tmp_path):
    """A JCAMP-DX file, a FID folder and a spec, copied from the sample spectra."""
    jdx = tmp_path / "crude.jdx"
    shutil.copy(sample_files()[1], jdx)
    fid = tmp_path / "fid_folder"
    shutil.copytree(sample_files()[0], fid)
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC_TEXT)
    return {"jdx": jdx, "fid": fid, "spec": spec, "dir": tmp_path}


def _refused(run_cli, *args, inputs=(), names=()):
    before = {p: _digest(p) for p in inputs}
    result = run_cli(*args)
    assert result.exit_code == 2, (result.exit_code, result.stderr)
    assert result.stderr.startswith("error: ") and result.stderr.count("\n") == 1, result.stderr
    for name in names:
        assert str(name) in result.stderr, result.stderr
    for path, digest in before.items():
        assert _digest(path) == digest, f"{path} was changed"
    return result


# --- the check itself ---------------------------------------------------------------------------


def test_check_outputs_relations(tmp_path):
    folder = tmp_path / "fid"
    folder.mkdir()
    data = folder / "fid"
    data.write_bytes(b"x")
    with pytest.raises(InputError, match="is the input"):
        check_outputs([("--out", data)], [("PATH", data)])
    with pytest.raises(InputError, match="lies inside the input"):
        check_outputs([("--report", folder / "r.html")], [("--spectrum", folder)])
    with pytest.raises(InputError, match="contains the input"):
        check_outputs([("--report", tmp_path)], [("--spectrum", data)])
    with pytest.raises(InputError, match="name the same place"):
        check_outputs([("--report", tmp_path / "a.html"), ("--audit", tmp_path / "a.html")], [])
    check_outputs([("--report", tmp_path / "a.html"), ("--audit", tmp_path / "a.json")],
                  [("--spectrum", folder)])
    check_outputs([("--report", None)], [("--spectrum", None)])


def test_check_outputs_follows_symbolic_links(tmp_path):
    data = tmp_path / "crude.jdx"
    data.write_text("##TITLE=x\n")
    link = tmp_path / "report.html"
    link.symlink_to(data)
    with pytest.raises(InputError, match="crude.jdx"):
        check_outputs([("--report", link)], [("--spectrum", data)])
    linked_folder = tmp_path / "elsewhere"
    linked_folder.symlink_to(tmp_path)
    with pytest.raises(InputError, match="is the input"):
        check_outputs([("--report", linked_folder / "crude.jdx")], [("--spectrum", data)])
    loop = tmp_path / "loop"
    loop.symlink_to(tmp_path / "loop2")
    (tmp_path / "loop2").symlink_to(loop)
    check_outputs([("--report", loop / "x.html")], [("--spectrum", data)])  # a loop is no input


def test_output_folders_may_not_lie_inside_an_input(tmp_path):
    source = tmp_path / "plate"
    source.mkdir()
    with pytest.raises(InputError, match="lies inside the input"):
        check_outputs([], [("source", source)], folders=[("--out", source / "results")])
    with pytest.raises(InputError, match="is the input"):
        check_outputs([], [("source", source)], folders=[("--out", source)])
    check_outputs([], [("source", source)], folders=[("--out", tmp_path / "results")])


def test_atomic_path_replaces_a_link_instead_of_writing_through_it(tmp_path):
    victim = tmp_path / "victim.txt"
    victim.write_text("keep")
    link = tmp_path / "out.txt"
    link.symlink_to(victim)
    write_text_atomic(link, "new")
    assert victim.read_text() == "keep"
    assert not link.is_symlink() and link.read_text() == "new"


def test_atomic_path_turns_system_refusals_into_input_errors(tmp_path):
    with pytest.raises(InputError, match="cannot write|too long"):
        write_text_atomic(tmp_path / ("a" * 300 + ".txt"), "x")
    if os.geteuid() != 0:  # root may write anywhere
        locked = tmp_path / "locked"
        locked.mkdir()
        locked.chmod(0o500)
        try:
            with pytest.raises(InputError, match="cannot write"):
                write_text_atomic(locked / "out.txt", "x")
            with pytest.raises(InputError, match="not writable"):
                check_file_targets([("--report", locked / "out.html")])
        finally:
            locked.chmod(0o700)
    with pytest.raises(InputError, match="does not exist"):
        check_file_targets([("--report", tmp_path / "no" / "r.html")])


def test_a_full_disk_is_bad_input_and_leaves_nothing_behind(tmp_path):
    import errno

    target = tmp_path / "x.txt"
    target.write_text("old")
    with pytest.raises(InputError, match="No space left"), atomic_path(target) as tmp:
        tmp.write_text("half")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["x.txt"]


# --- every command with an output option --------------------------------------------------------


def test_analyze_report_onto_the_spectrum(run_cli, data):
    jdx = data["jdx"]
    _refused(run_cli, "analyze", "--spectrum", jdx, "--candidates", *ANETHOLES, "--report", jdx,
             inputs=[jdx], names=["--report", "--spectrum", str(jdx)])


def test_analyze_report_inside_the_fid_folder_or_through_a_link(run_cli, data):
    fid = data["fid"]
    _refused(run_cli, "analyze", "--spectrum", fid, "--candidates", *ANETHOLES, "--report", fid / "fid",
             inputs=[fid], names=["lies inside"])
    link = data["dir"] / "report.html"
    link.symlink_to(data["jdx"])
    _refused(run_cli, "analyze", "--spectrum", data["jdx"], "--candidates", *ANETHOLES, "--report", link,
             inputs=[data["jdx"]], names=[str(link)])


def test_a_file_of_a_fid_folder_stands_for_the_folder(run_cli, data):
    fid = data["fid"]
    _refused(run_cli, "analyze", "--spectrum", fid / "fid", "--candidates", *ANETHOLES, "--report",
             fid / "report.html", inputs=[fid], names=["its folder"])
    _refused(run_cli, "process", fid / "acqus", "--out", fid / "spectrum.csv", inputs=[fid],
             names=["its folder"])


def test_analyze_report_onto_a_candidate_molfile(run_cli, data):
    from rdkit import Chem

    mol = data["dir"] / "e.mol"
    Chem.MolToMolFile(Chem.MolFromSmiles(ANETHOLES[0]), str(mol))
    _refused(run_cli, "analyze", "--spectrum", data["jdx"], "--candidates", mol, ANETHOLES[1],
             "--report", mol, inputs=[mol], names=["--candidates"])


def test_qc_outputs(run_cli, data):
    jdx, spec = data["jdx"], data["spec"]
    base = ("qc", "--spec", spec, "--spectrum", jdx)
    _refused(run_cli, *base, "--audit", spec, inputs=[spec, jdx], names=["--audit", "--spec"])
    _refused(run_cli, *base, "--report", jdx, inputs=[spec, jdx], names=["--report"])
    same = data["dir"] / "same.out"
    _refused(run_cli, *base, "--report", same, "--audit", same, inputs=[spec, jdx],
             names=["--report", "--audit"])
    assert not same.exists()


def test_process_outputs(run_cli, data):
    fid, jdx = data["fid"], data["jdx"]
    _refused(run_cli, "process", jdx, "--out", jdx, inputs=[jdx], names=["--out"])
    _refused(run_cli, "process", fid, "--plot", fid / "acqus.png", inputs=[fid], names=["--plot"])
    twice = data["dir"] / "x.png"
    _refused(run_cli, "process", jdx, "--out", twice, "--plot", twice, inputs=[jdx],
             names=["--out", "--plot"])


def test_demo_out_on_an_existing_file_or_into_the_samples(run_cli, data, monkeypatch):
    monkeypatch.setattr(demo_command, "sample_files", lambda: [data["fid"], data["jdx"]])
    existing = data["dir"] / "notes.txt"
    existing.write_text("mine")
    _refused(run_cli, "demo", "--out", existing, inputs=[existing], names=["existing file"])
    _refused(run_cli, "demo", "--out", data["fid"], inputs=[data["fid"]], names=["is the input"])
    _refused(run_cli, "demo", "--out", data["fid"] / "results", inputs=[data["fid"]], names=["lies inside"])


def test_predict_plot_into_a_missing_folder(run_cli, tmp_path):
    _refused(run_cli, "predict", "C=C", "--plot", tmp_path / "missing" / "x.png", names=["does not exist"])


# --- exit codes of the environment --------------------------------------------------------------


def test_paths_too_long_are_bad_input(run_cli, tmp_path):
    long_name = tmp_path / ("x" * 5000)
    result = run_cli("analyze", "--spectrum", long_name, "--candidates", *ANETHOLES)
    assert result.exit_code == 2 and "internal error" not in result.stderr, result.stderr
    result = run_cli("process", sample_files()[1], "--out", tmp_path / ("y" * 400 + ".csv"))
    assert result.exit_code == 2 and "internal error" not in result.stderr, result.stderr


def test_an_os_error_from_the_environment_is_exit_2(run_cli, monkeypatch):
    from confirm.commands import candidates

    def denied(_args):
        raise PermissionError(13, "Permission denied", "/data/crude.jdx")

    monkeypatch.setattr(candidates, "_run", denied)
    result = run_cli("candidates", "CCBr", "--reagent", "KOH")
    assert result.exit_code == 2
    assert result.stderr == "error: '/data/crude.jdx': Permission denied\n"


def test_numerical_warnings_do_not_reach_the_user(run_cli, monkeypatch):
    from confirm.commands import candidates

    def noisy(_args):
        np.mean(np.array([]))
        np.array([1.0]) / np.array([0.0])
        print("done")
        return 0

    monkeypatch.setattr(candidates, "_run", noisy)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        result = run_cli("candidates", "CCBr", "--reagent", "KOH")
    assert result.exit_code == 0 and result.stderr == "" and not seen
    with pytest.warns(RuntimeWarning):  # --debug shows them
        run_cli("candidates", "CCBr", "--reagent", "KOH", "--debug")


def test_broken_pipe_ends_quietly_with_141(tmp_path):
    # the reader closes its end before confirm writes anything: every write then fails
    proc = subprocess.Popen([sys.executable, "-m", "confirm", "predict", "CCCCCCCC/C=C/CCCC"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    proc.stdout.close()
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 141, err
    assert b"internal error" not in err and b"Traceback" not in err and b"Broken pipe" not in err


def test_ctrl_c_ends_quietly_with_130():
    """Ctrl-C in a terminal reaches the whole process group: confirm and the process it forked."""
    args = [sys.executable, "-m", "confirm", "analyze", "--spectrum", str(sample_files()[0]),
            "--substrate", "CC(Br)Cc1ccc(OC)cc1", "--reagent", "KOH"]
    proc = subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True)
    time.sleep(1.5)
    os.killpg(proc.pid, signal.SIGINT)
    _, err = proc.communicate(timeout=30)
    if proc.returncode == 0:
        pytest.skip("the analysis finished before the signal was sent (or conformer embedding took it)")
    # 130, or ended by the signal itself (-2; seen now and then after "interrupted" was printed),
    # which a shell reports as 130 too
    assert proc.returncode in (130, -signal.SIGINT), err
    assert b"internal error" not in err and b"Traceback" not in err, err.decode()[-2000:]


def _interrupt_myself():
    os.kill(os.getpid(), signal.SIGINT)
    time.sleep(10)


def test_a_forked_worker_leaves_quietly_on_ctrl_c(monkeypatch, capfd):
    import multiprocessing

    from confirm.cli import main
    from confirm.commands import candidates

    codes = []

    def forks_a_worker(_args):
        worker = multiprocessing.get_context("fork").Process(target=_interrupt_myself)
        worker.start()
        worker.join(timeout=20)
        codes.append(worker.exitcode)
        return 0

    monkeypatch.setattr(candidates, "_run", forks_a_worker)
    capfd.readouterr()
    assert main(["candidates", "CCBr", "--reagent", "KOH"]) == 0
    assert codes == [130]
    assert "Traceback" not in capfd.readouterr().err
