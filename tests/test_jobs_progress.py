"""``check --jobs``: a parallel run gives the same report as a serial one, byte for byte, whatever the format, with
shared waivers and a baseline; the progress line appears on a terminal only, never in a pipe or a report."""

from __future__ import annotations

import fcntl
import io
import json
import os
import pty
import select
import shutil
import struct
import subprocess
import sys
import termios
import time
from pathlib import Path

import pytest

from afecheck.cli import main

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_designs"
DESIGNS = ["soil_probe_reader.yaml", "hydrophone_preamp.yaml", "cold_store_logger.yaml", "vibration_follower.yaml"]


def _tree(tmp_path: Path) -> list[str]:
    for name in (*DESIGNS, "vibration_follower.intent.yaml"):
        shutil.copy(SAMPLES / name, tmp_path / name)
    files = []
    for i in range(3):  # the same designs again under other names: more work than processes
        for name in DESIGNS:
            target = tmp_path / f"copy{i}_{name}"
            target.write_text((tmp_path / name).read_text(encoding="utf-8"), encoding="utf-8")
            files.append(str(target))
    return [str(tmp_path / n) for n in DESIGNS] + files


def _run(args: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    return main(args, stdout=out, stderr=err), out.getvalue(), err.getvalue()


@pytest.mark.parametrize("fmt", ["text", "json", "sarif", "markdown", "junit"])
def test_parallel_report_is_byte_identical_to_serial(tmp_path: Path, fmt: str, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    files = _tree(tmp_path)
    first = json.loads(_run(["check", "--format", "json", "--jobs", "1", "--fail-on", "never", files[0]])[1])
    fp = first["findings"][0]["fingerprint"]
    waivers = tmp_path / "w.yaml"
    waivers.write_text("afecheck-waivers: 1\nwaivers:\n"
                       f"  - fingerprint: {fp}\n    justification: measured on the bench\n"
                       "    accepted-by: A. Reviewer\n"
                       "  - fingerprint: 0123456789abcdef\n    justification: stale\n    accepted-by: A. Reviewer\n",
                       encoding="utf-8")
    common = ["check", "--format", fmt, "--fail-on", "warning", "--waivers", str(waivers), *files]
    serial = _run([*common, "--jobs", "1"])
    parallel = _run([*common, "--jobs", "2"])
    assert serial[0] == parallel[0] == 1
    assert serial[1] == parallel[1]
    if fmt == "json":
        data = json.loads(parallel[1])
        assert len(data["designs"]) == len(files)
        assert [w["fingerprint"] for w in data["waivers"]["unused"]] == ["0123456789abcdef"]  # used by one worker


def test_parallel_run_refuses_an_output_onto_a_file_a_worker_read(tmp_path: Path) -> None:
    files = _tree(tmp_path)
    intent = tmp_path / "vibration_follower.intent.yaml"
    before = intent.read_bytes()
    status, _, err = _run(["check", "--jobs", "2", "--fail-on", "never", "--format", "json", "--output", str(intent),
                           *files])
    assert status == 2 and "vibration_follower.intent.yaml" in err
    assert intent.read_bytes() == before


@pytest.mark.parametrize("value", ["0", "-1", "two"])
def test_jobs_must_be_a_positive_whole_number(value: str) -> None:
    status, _, _ = _run(["check", "--jobs", value, str(SAMPLES / DESIGNS[0])])
    assert status == 2


def _pty_run(args: list[str], env: dict[str, str]) -> tuple[int, str, str]:
    """Run afecheck with standard error on a pseudo-terminal and standard output on a pipe."""
    leader, follower = pty.openpty()
    fcntl.ioctl(follower, termios.TIOCSWINSZ, struct.pack("HHHH", 30, 120, 0, 0))  # a 120-column terminal
    proc = subprocess.Popen([sys.executable, "-m", "afecheck", *args], stdout=subprocess.PIPE, stderr=follower,
                            stdin=subprocess.DEVNULL, env=env)
    os.close(follower)
    chunks: list[bytes] = []
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:
        ready, _, _ = select.select([leader], [], [], 0.2)
        if ready:
            try:
                data = os.read(leader, 4096)
            except OSError:
                break
            if not data:
                break
            chunks.append(data)
        elif proc.poll() is not None:
            break
    out = proc.stdout.read().decode() if proc.stdout else ""
    proc.wait(timeout=60)
    os.close(leader)
    return proc.returncode, out, b"".join(chunks).decode(errors="replace")


@pytest.mark.slow
def test_progress_line_on_a_terminal_and_never_in_the_report(tmp_path: Path) -> None:
    once = _tree(tmp_path)
    files = once * 4
    env = {k: v for k, v in os.environ.items() if k != "CI"}
    env["AFECHECK_PROGRESS_AFTER_S"] = "0"
    status, out, err = _pty_run(["check", "--jobs", "1", "--fail-on", "never", *files], env)
    assert status == 0
    assert "designs" in err and f"/{len(files)} designs" in err and "stages analysed" in err and "left" in err
    assert "designs," not in out and "\r" not in out  # the report on stdout carries no progress
    # with the line drawn at once (delay 0), a quarter of the work would still show it were it not suppressed
    quiet = _pty_run(["check", "--jobs", "1", "--quiet", "--fail-on", "never", *once], env)
    assert quiet[0] == 0 and "designs," not in quiet[2]
    in_ci = _pty_run(["check", "--jobs", "1", "--fail-on", "never", *once], {**env, "CI": "true"})
    assert in_ci[0] == 0 and "designs," not in in_ci[2]


def test_no_progress_line_without_a_terminal(tmp_path: Path) -> None:
    files = _tree(tmp_path)
    env = {k: v for k, v in os.environ.items() if k != "CI"}
    env["AFECHECK_PROGRESS_AFTER_S"] = "0"
    proc = subprocess.run([sys.executable, "-m", "afecheck", "check", "--jobs", "1", "--fail-on", "never", *files],
                          capture_output=True, text=True, env=env, timeout=120)
    assert proc.returncode == 0 and "designs," not in proc.stderr and "designs," not in proc.stdout


def test_parallel_run_reviews_the_first_design_here_and_the_rest_in_worker_processes(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from afecheck import api

    real = api._review_in_worker

    def in_worker(path: str) -> object:  # resolved by name in the forked workers, which inherit the patch
        out = real(path)
        out.notes = (f"pid {os.getpid()}",)
        return out

    in_worker.__qualname__ = in_worker.__name__ = "_review_in_worker"
    in_worker.__module__ = "afecheck.api"
    monkeypatch.setattr(api, "_review_in_worker", in_worker)
    files = _tree(tmp_path)
    heard: list[str] = []
    report = api.review_files(files, jobs=2, fail_on="never", on_note=heard.append)
    assert [d.file for d in report.designs] == files  # input order kept
    assert len(heard) == len(files) - 1  # every design but the first came from a worker ...
    assert f"pid {os.getpid()}" not in heard  # ... in another process
