"""Benchmark ``afecheck check`` end to end on generated N-channel designs (not a test: it prints figures).

For each N it writes a generated design (tests/tools/generate.py), then measures in fresh processes:
  * wall time of ``afecheck check FILE`` from the shell, interpreter start included, and its peak
    resident memory (ru_maxrss of that child, from os.wait4);
  * time per phase in one process, each timed on its own: load, analyse, rules (given the analysis),
    and rendering the text report;
  * where ngspice is installed, ngspice on the SPICE deck from ``afecheck spice`` computing only the
    operating point and a 201-point AC sweep, and the ratio of the two wall times.

Usage: python benchmarks/bench_check.py [--channels 1 10 100 1000 4000] [--repeat 3] [--format json|yaml]
"""

from __future__ import annotations

import argparse
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from tools.generate import PARTS_PER_CHANNEL, write_design  # noqa: E402

SPICE_ERRORS = ("error", "singular matrix", "warning from checkvalid", "simulation interrupted")
AC_SWEEP = "ac dec 40 10 1meg"  # 5 decades x 40 points + 1 = 201 points


def _afecheck_cmd() -> list[str]:
    exe = shutil.which("afecheck")
    return [exe] if exe else [sys.executable, "-m", "afecheck"]


def _run_measured(cmd: list[str], stdout_path: Path | None = None) -> tuple[float, float, int, str, float]:
    """Run ``cmd``; return (wall seconds, peak RSS in MB, exit status, stderr, CPU seconds user + system)."""
    out = open(stdout_path, "w") if stdout_path else subprocess.DEVNULL
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=out, stderr=subprocess.PIPE, text=True)
    stderr = proc.stderr.read() if proc.stderr else ""
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    if stdout_path:
        out.close()
    return wall, usage.ru_maxrss / 1024.0, proc.returncode, stderr, usage.ru_utime + usage.ru_stime


def _phases_child(path: str) -> None:
    """In a fresh interpreter: time load, analyse, rules and report for one design; print JSON."""

    times: dict[str, float | None] = {}
    t0 = time.perf_counter()
    import afecheck.api as api
    from afecheck.model.load import load_design

    times["import"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    loaded = load_design(path)
    times["load"] = time.perf_counter() - t0
    from afecheck.analysis import analyse
    from afecheck.report import render

    t0 = time.perf_counter()
    analysis = analyse(loaded)
    times["analyse"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    report = api.check_design(loaded, analysis=analysis)
    times["rules"] = time.perf_counter() - t0
    reviewed = api.review_files([path], fail_on="never")
    t0 = time.perf_counter()
    render(reviewed, "text", color=False)
    times["report"] = time.perf_counter() - t0
    times["findings"] = len(report.findings)
    print(json.dumps(times))


def _phases(path: Path) -> dict:
    proc = subprocess.run([sys.executable, __file__, "--phases-of", str(path)], capture_output=True, text=True)
    if proc.returncode != 0:
        return {"error": proc.stderr.strip().splitlines()[-1] if proc.stderr.strip() else f"exit {proc.returncode}"}
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _spice(path: Path, work: Path, klu: bool = False) -> tuple[float | None, str]:
    """Wall time of ngspice on the design's deck (operating point + 201-point AC sweep), or why not."""
    ngspice = shutil.which("ngspice")
    if ngspice is None:
        return None, "ngspice not installed"
    proc = subprocess.run(_afecheck_cmd() + ["spice", str(path)], capture_output=True, text=True)
    if proc.returncode != 0 or not proc.stdout.strip():
        reason = (proc.stderr.strip().splitlines() or [f"exit {proc.returncode}"])[-1]
        return None, f"afecheck spice unavailable: {reason[:100]}"
    deck = re.sub(r"(?ims)^\.control\b.*?^\.endc\b.*?$", "", proc.stdout)
    deck = re.sub(r"(?im)^\.end\s*$", "", deck).rstrip()
    options = ".options klu\n" if klu else ""
    deck += f"\n{options}.control\nop\n{AC_SWEEP}\nquit\n.endc\n.end\n"
    cir = work / f"{path.stem}.cir"
    cir.write_text(deck, encoding="utf-8")
    t0 = time.perf_counter()
    run = subprocess.run([ngspice, "-b", str(cir)], capture_output=True, text=True)
    wall = time.perf_counter() - t0
    text = (run.stdout + run.stderr).lower()
    bad = [e for e in SPICE_ERRORS if e in text]
    return wall, ("ngspice reported: " + ", ".join(bad)) if bad else "ok"


def main(argv: list[str] | None = None) -> int:
    """Run the benchmark and print one table row per design size."""
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--channels", type=int, nargs="+", default=[1, 10, 100, 1000, 4000])
    p.add_argument("--repeat", type=int, default=3, help="end-to-end runs per size (the fastest is kept)")
    p.add_argument("--format", choices=["json", "yaml"], default="json")
    p.add_argument("--no-spice", action="store_true", help="skip the ngspice comparison")
    p.add_argument("--klu", action="store_true", help="ask ngspice for its KLU sparse solver (.options klu)")
    p.add_argument("--phases-of", help=argparse.SUPPRESS)
    args = p.parse_args(argv)
    if args.phases_of:
        _phases_child(args.phases_of)
        return 0
    cmd = _afecheck_cmd()
    print(f"afecheck command: {' '.join(cmd)}; python {sys.version.split()[0]}; cpus {os.cpu_count()}")
    head = (f"{'N':>5} {'parts':>6} {'wall s':>7} {'cpu s':>7} {'peak MB':>8} {'exit':>4} {'load':>6} {'analyse':>7} "
            f"{'rules':>6} {'report':>6} {'finds':>5} {'ngspice s':>9} {'ratio':>6}")
    print(head)
    walls: dict[int, float] = {}
    notes: list[str] = []
    with tempfile.TemporaryDirectory(prefix="afebench-") as tmp:
        work = Path(tmp)
        for n in args.channels:
            design = write_design(work / f"rack{n}.{args.format}", n)
            runs = [_run_measured(cmd + ["check", "--fail-on", "never", str(design)]) for _ in range(args.repeat)]
            wall = min(r[0] for r in runs)
            cpu = min(r[4] for r in runs)
            peak = max(r[1] for r in runs)
            status = runs[0][2]
            if status != 0:
                notes.append(f"N={n}: afecheck exit {status}: {runs[0][3].strip()[-200:]}")
            walls[n] = wall
            ph = _phases(design)
            if "error" in ph:
                notes.append(f"N={n}: phase timing failed: {ph['error']}")

            def cell(key: str, ph: dict = ph) -> str:
                v = ph.get(key)
                return "n/a" if v is None else f"{v:.3f}"

            spice_s, why = (None, "skipped") if args.no_spice else _spice(design, work, args.klu)
            if spice_s is None or why != "ok":
                notes.append(f"N={n}: ngspice: {why}")
            ratio = f"{wall / spice_s:.1f}" if spice_s else "n/a"
            spice_cell = f"{spice_s:.3f}" if spice_s is not None else "n/a"
            print(f"{n:>5} {n * PARTS_PER_CHANNEL:>6} {wall:>7.3f} {cpu:>7.3f} {peak:>8.1f} {status:>4} "
                  f"{cell('load'):>6} {cell('analyse'):>7} {cell('rules'):>6} {cell('report'):>6} "
                  f"{ph.get('findings', 'n/a'):>5} {spice_cell:>9} {ratio:>6}", flush=True)
    if 1000 in walls and 4000 in walls:
        print(f"growth 4000/1000 channels: {walls[4000] / walls[1000]:.2f}x (target within 4.5x)")
    if 1000 in walls:
        print(f"1000 channels: {walls[1000]:.3f} s (target < 2 s)")
    if 1 in walls:
        print(f"1 channel from the shell: {walls[1]:.3f} s (target < 0.5 s)")
    for note in notes:
        print("note:", note)
    return 0


if __name__ == "__main__":
    sys.exit(main())
