"""Where reports, baselines and decks go: regular files replaced atomically with the usual modes, devices and pipes
written in place, symlinks followed and kept, directories and inputs refused (exit 2), a run's files as a set.

The expected behaviour is that of ordinary Unix tools writing a file (shell redirection, ``cp``): new files get
0666 less the umask, a replaced file keeps its mode, a device stays a device (common practice; POSIX open(2) and
rename(2) semantics).
"""

from __future__ import annotations

import io
import json
import os
import shutil
import stat
import subprocess
import sys
import threading
from pathlib import Path

import pytest
from fixtures.gate.fakes import REGISTRY

from afecheck.cli import main
from afecheck.io import PARTIAL, OutputError, remove_stale_partials, write_outputs

ROOT = Path(__file__).resolve().parents[1]
GATE = Path(__file__).parent / "fixtures" / "gate"
WAIVERS = "afecheck-waivers: 1\nwaivers: []\n"


@pytest.fixture()
def work(tmp_path, monkeypatch):
    """A working folder with a copy of the gate fixture design, checked by the fast fake rules."""
    monkeypatch.setattr("afecheck.api._registry", lambda registry: registry or REGISTRY)
    shutil.copy(GATE / "logger.yaml", tmp_path / "logger.yaml")
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def _report(*extra: str) -> tuple[int, str, str]:
    return _run("check", "logger.yaml", "--today", "2026-12-02", "--format", "json", *extra)


def _partials(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if PARTIAL in p.name)


def test_dev_null_stays_a_character_device(work):
    code, _, err = _report("--output", "/dev/null")
    assert code == 1, err
    assert stat.S_ISCHR(os.stat("/dev/null").st_mode)


def test_a_fifo_is_written_in_place_for_its_reader(work):
    fifo = work / "pipe"
    os.mkfifo(fifo)
    got: list[bytes] = []
    reader = threading.Thread(target=lambda: got.append(fifo.read_bytes()), daemon=True)
    reader.start()
    code, _, err = _report("--output", "pipe")
    reader.join(timeout=20)
    assert code == 1, err
    assert got and got[0].startswith(b"{") and b'"findings"' in got[0]
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode) and _partials(work) == []


def test_dev_stdout_is_written_directly(tmp_path):
    # a separate process whose standard output is a pipe: /dev/stdout leads to it through /proc/self/fd/1
    design = ROOT / "sample_designs" / "soil_probe_reader.yaml"
    run = subprocess.run([sys.executable, "-m", "afecheck", "spice", str(design), "--output", "/dev/stdout"],
                         capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert run.returncode == 0, run.stderr
    assert run.stdout.startswith("soil-probe reader\n") and run.stdout.rstrip().endswith(".end")
    assert list(tmp_path.iterdir()) == []


def test_baseline_to_dev_stdout_is_the_baseline_alone(tmp_path):
    # the "recorded N findings" note goes to standard error, so standard output holds exactly the JSON baseline
    design = ROOT / "sample_designs" / "soil_probe_reader.yaml"
    argv = ["baseline", "--no-config", str(design), "-o", "/dev/stdout"]
    run = subprocess.run([sys.executable, "-m", "afecheck", *argv],
                         capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert run.returncode == 0, run.stderr
    assert json.loads(run.stdout)["afecheck_baseline"] == 1 and "recorded" in run.stderr
    assert list(tmp_path.iterdir()) == []


def test_a_symlink_is_followed_and_kept(work):
    real = work / "reports" / "r.json"
    real.parent.mkdir()
    real.write_text("old", encoding="utf-8")
    os.chmod(real, 0o640)
    (work / "latest.json").symlink_to("reports/r.json")
    code, _, err = _report("--output", "latest.json")
    assert code == 1, err
    assert (work / "latest.json").is_symlink() and os.readlink(work / "latest.json") == "reports/r.json"
    assert real.read_text(encoding="utf-8").startswith("{")
    assert stat.S_IMODE(real.stat().st_mode) == 0o640
    assert _partials(real.parent) == [] and _partials(work) == []


def test_a_dangling_symlink_creates_its_target(work):
    (work / "latest.json").symlink_to("r.json")
    assert _report("--output", "latest.json")[0] == 1
    assert (work / "latest.json").is_symlink() and (work / "r.json").read_text(encoding="utf-8").startswith("{")


def test_a_directory_is_a_usage_error(work):
    (work / "out").mkdir()
    code, out, err = _report("--output", "out")
    assert code == 2 and out == ""
    assert err == "afecheck: error: cannot write out: it is a directory; name a file in it\n"
    assert list((work / "out").iterdir()) == []


def test_a_folder_that_cannot_hold_files_is_a_clear_error(work):
    # root may write anywhere, so the unwritable folder is a regular file standing where the folder should be
    (work / "notafolder").write_text("x", encoding="utf-8")
    code, _, err = _report("--output", "notafolder/r.json")
    assert code == 2
    assert err == "afecheck: error: cannot write notafolder/r.json: Not a directory\n"
    assert (work / "notafolder").read_text(encoding="utf-8") == "x"


def test_an_existing_file_keeps_its_mode(work):
    for mode in (0o600, 0o640, 0o664):
        (work / "r.json").write_text("old", encoding="utf-8")
        os.chmod(work / "r.json", mode)
        assert _report("--output", "r.json")[0] == 1
        assert stat.S_IMODE((work / "r.json").stat().st_mode) == mode


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() != 0, reason="only root can give a file away")
def test_a_replaced_file_keeps_its_owner_and_group(work):
    (work / "r.json").write_text("old", encoding="utf-8")
    os.chown(work / "r.json", 4321, 8765)
    assert _report("--output", "r.json")[0] == 1
    st = (work / "r.json").stat()
    assert (st.st_uid, st.st_gid) == (4321, 8765)


@pytest.mark.parametrize(("umask", "mode"), [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)])
def test_a_new_file_honours_the_umask(work, umask, mode):
    old = os.umask(umask)
    try:
        assert _report("--output", "new.json")[0] == 1
        assert _run("baseline", "logger.yaml", "--output", "b.json")[0] == 0
    finally:
        os.umask(old)
    assert stat.S_IMODE((work / "new.json").stat().st_mode) == mode
    assert stat.S_IMODE((work / "b.json").stat().st_mode) == mode


def _unchanged(path: Path):
    before = path.read_bytes()
    return lambda: path.read_bytes() == before


def test_spice_never_overwrites_its_design(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    shutil.copy(ROOT / "sample_designs" / "soil_probe_reader.yaml", "d.yaml")
    same = _unchanged(tmp_path / "d.yaml")
    code, _, err = _run("spice", "d.yaml", "--output", "d.yaml")
    assert code == 2 and "--output d.yaml is an input file" in err and same()
    code, _, err = _run("spice", "d.yaml", "--output", f"{tmp_path}/./d.yaml")
    assert code == 2 and "is an input file" in err and same()


def test_check_never_overwrites_the_intent_file_the_design_names(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    for name in ("vibration_follower.yaml", "vibration_follower.intent.yaml"):
        shutil.copy(ROOT / "sample_designs" / name, name)
    same = _unchanged(tmp_path / "vibration_follower.intent.yaml")
    code, _, err = _run("check", "vibration_follower.yaml", "--format", "json",
                        "--output", "vibration_follower.intent.yaml")
    assert code == 2 and "vibration_follower.intent.yaml is an input file" in err and same()


@pytest.mark.parametrize("link", ["hard", "symbolic"])
def test_check_never_overwrites_a_waiver_file_through_a_link(work, link):
    (work / "w.yaml").write_text(WAIVERS, encoding="utf-8")
    (work / ".afecheck.yaml").write_text("afecheck-config: 1\nwaivers: [w.yaml]\n", encoding="utf-8")
    (os.link if link == "hard" else os.symlink)(work / "w.yaml", work / "report.json")
    same = _unchanged(work / "w.yaml")
    code, _, err = _report("--output", "report.json")
    assert code == 2 and "report.json is an input file" in err and same()
    code, _, err = _run("baseline", "logger.yaml", "--output", "report.json")
    assert code == 2 and "is an input file" in err and same()


def test_two_names_for_one_output_file_are_refused(work):
    code, _, err = _run("check", "logger.yaml", "--format", "json", "-o", "r.json", "--format", "sarif",
                        "-o", "./r.json")
    assert code == 2 and "are the same file" in err and not (work / "r.json").exists()


def test_reports_are_written_as_a_set(work):
    (work / "a.json").write_text("old a", encoding="utf-8")
    (work / "blocker").write_text("x", encoding="utf-8")
    code, _, err = _run("check", "logger.yaml", "--format", "json", "-o", "a.json", "--format", "sarif",
                        "-o", "blocker/b.sarif")
    assert code == 2 and "cannot write blocker/b.sarif" in err
    assert (work / "a.json").read_text(encoding="utf-8") == "old a" and _partials(work) == []


def test_stale_partials_of_dead_runs_are_removed(work):
    done = subprocess.run(["true"], check=True)  # noqa: S603, S607 - a process that has surely ended
    dead = subprocess.Popen(["true"])  # noqa: S603, S607
    dead.wait()
    alive = subprocess.Popen(["sleep", "30"])  # noqa: S603, S607
    try:
        stale = work / f".r.json{PARTIAL}{dead.pid}"
        busy = work / f".r.json{PARTIAL}{alive.pid}"
        other = work / f".other.json{PARTIAL}{dead.pid}"
        for p in (stale, busy, other):
            p.write_text("half a report", encoding="utf-8")
        assert _report("--output", "r.json")[0] == 1
        assert not stale.exists() and busy.exists() and other.exists()
    finally:
        alive.kill()
        alive.wait()
    assert done.returncode == 0


def test_a_failed_write_leaves_no_partial_and_raises_output_error(tmp_path, monkeypatch):
    target = tmp_path / "r.txt"
    target.write_text("old", encoding="utf-8")

    def full_disk(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", full_disk)
    with pytest.raises(OutputError, match="No space left on device"):
        write_outputs([(target, "new")])
    assert target.read_text(encoding="utf-8") == "old" and _partials(tmp_path) == []


def test_remove_stale_partials_keeps_other_files(tmp_path):
    (tmp_path / "r.json").write_text("report", encoding="utf-8")
    (tmp_path / f".r.json{PARTIAL}x").write_text("not a pid", encoding="utf-8")
    assert remove_stale_partials(tmp_path / "r.json") == []
    assert sorted(p.name for p in tmp_path.iterdir()) == [f".r.json{PARTIAL}x", "r.json"]
