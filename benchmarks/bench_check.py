"""Benchmark ``afecheck check`` end to end on generated N-channel designs (not a test: it prints figures).

For each size it writes a generated design (tests/tools/generate.py) and, alternating the two programs so a
busy moment hits both alike, runs ``--repeat`` times each:
  * afecheck: ``afecheck check --fail-on never FILE`` from the shell, interpreter start included: the whole
    check (load, analysis of every stage, every rule, the text report); wall and CPU time, peak memory;
  * ngspice: the deck ``afecheck spice FILE`` writes, asked for the operating point and a 201-point AC sweep
    with every vector kept (ngspice's default), each channel excited by an AC source. That is a bare
    simulation: no loop gains, no ranges, no rules.
Medians are printed with the min-max range. Then: the time per phase in one process, a batch (N one-channel
designs in one run against N separate runs, and ``--jobs`` where the command has it) and the imports that
cost most at start-up. ``--write-doc`` writes the figures into docs/BENCHMARK.md with the date and machine.

Usage: python benchmarks/bench_check.py [--channels 1 10 100 1000 4000] [--repeat 5] [--write-doc]
"""

from __future__ import annotations

import argparse
import datetime as dt
import inspect
import json
import os
import platform
import re
import shutil
import statistics
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
DOC = ROOT / "docs" / "BENCHMARK.md"
START, END = "<!-- figures:start (written by benchmarks/bench_check.py --write-doc) -->", "<!-- figures:end -->"


def _afecheck_cmd() -> list[str]:
    exe = shutil.which("afecheck")
    return [exe] if exe else [sys.executable, "-m", "afecheck"]


def _run_measured(cmd: list[str]) -> tuple[float, float, int, str, float]:
    """Run ``cmd``; return (wall seconds, peak RSS in MiB, exit status, stderr, CPU seconds user + system)."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    stderr = proc.stderr.read() if proc.stderr else ""
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    return wall, usage.ru_maxrss / 1024.0, os.waitstatus_to_exitcode(status), stderr, usage.ru_utime + usage.ru_stime


def _phases_child(path: str, first: str) -> None:
    """In a fresh interpreter: time the imports, a first check of the one-channel design ``first`` (what every run
    pays once: modules imported on first use, the shipped part models, rule pages and retired ids read), then
    load, analyse, rules and report of the design at ``path``; print JSON."""
    times: dict[str, float | int | None] = {}
    t0 = time.perf_counter()
    import afecheck.api as api
    from afecheck.analysis import analyse
    from afecheck.analysis import design as _analysis  # noqa: F401 - numpy and the analysis modules
    from afecheck.model.load import load_design
    from afecheck.report import render

    times["import"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    render(api.review_files([first], fail_on="never", discover=False), "text", color=False)
    times["first run"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    loaded = load_design(path)
    times["load"] = time.perf_counter() - t0
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


def _phases(path: Path, first: Path) -> dict:
    proc = subprocess.run([sys.executable, __file__, "--phases-of", str(path), str(first)], capture_output=True,
                          text=True)
    if proc.returncode != 0:
        return {"error": proc.stderr.strip().splitlines()[-1] if proc.stderr.strip() else f"exit {proc.returncode}"}
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _deck(path: Path, work: Path) -> tuple[Path | None, str]:
    """The design's deck for ngspice: every rail that feeds a sensor divider also carries AC 1, so every channel
    has an AC source and the sweep computes a real response; op plus the AC sweep, every vector kept."""
    proc = subprocess.run(_afecheck_cmd() + ["spice", str(path)], capture_output=True, text=True)
    if proc.returncode != 0 or not proc.stdout.strip():
        reason = (proc.stderr.strip().splitlines() or [f"exit {proc.returncode}"])[-1]
        return None, f"afecheck spice unavailable: {reason[:100]}"
    deck = re.sub(r"(?ims)^\.control\b.*?^\.endc\b.*?$", "", proc.stdout)
    deck = re.sub(r"(?im)^\.end\s*$", "", deck).rstrip()
    deck = re.sub(r"(?im)^(VVREF_rail\s+\S+\s+\S+\s+DC\s+\S+)\s*$", r"\1 AC 1", deck)
    deck += f"\n.control\nop\n{AC_SWEEP}\nquit\n.endc\n.end\n"
    cir = work / f"{path.stem}.cir"
    cir.write_text(deck, encoding="utf-8")
    return cir, "ok"


def _spice_check(cir: Path) -> str:
    run = subprocess.run([shutil.which("ngspice") or "ngspice", "-b", str(cir)], capture_output=True, text=True)
    text = (run.stdout + run.stderr).lower()
    bad = [e for e in SPICE_ERRORS if e in text]
    return ("ngspice reported: " + ", ".join(bad)) if bad else "ok"


def _med(values: list[float]) -> str:
    return f"{statistics.median(values):.3f} ({min(values):.3f}-{max(values):.3f})"


def _machine() -> str:
    cpu = "unknown processor"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = ""
    try:
        total = next(ln for ln in Path("/proc/meminfo").read_text().splitlines() if ln.startswith("MemTotal"))
        kb = int(total.split()[1])
        mem = f", {kb / 1024 / 1024:.0f} GiB"
    except (OSError, StopIteration, ValueError):
        pass
    spice = subprocess.run(["ngspice", "--version"], capture_output=True, text=True).stdout if shutil.which("ngspice") \
        else ""
    sv = next((ln.strip() for ln in spice.splitlines() if "ngspice" in ln.lower() and any(c.isdigit() for c in ln)), "")
    load = os.getloadavg()[0]
    sv = sv.strip("* ").split(":")[0].strip()
    return (f"{platform.system()} {platform.release()}, {cpu}, {os.cpu_count()} cores{mem}; Python "
            f"{platform.python_version()}; {sv or 'ngspice not installed'}; load average {load:.1f} at the start")


def _batch(work: Path, count: int, repeat: int, separate_max: int) -> tuple[list[str], dict[str, float]]:
    """N one-channel designs: one run over all of them with ``--jobs 1`` and ``--jobs <cores>``, against separate
    runs (over the first ``separate_max`` designs, scaled to N and said so). Returns the rows and the medians."""
    files = [str(write_design(work / f"small{i}.json", 1)) for i in range(count)]
    cmd = _afecheck_cmd() + ["check", "--fail-on", "never"]
    cores = os.cpu_count() or 2
    runs: dict[int, list] = {1: [], cores: []}
    for _ in range(repeat):  # alternate the two so a busy moment hits both alike
        for jobs in runs:
            runs[jobs].append(_run_measured(cmd + ["--jobs", str(jobs), *files]))
    rows, medians = [], {}
    for jobs, measured in runs.items():
        wall, cpu = statistics.median([r[0] for r in measured]), statistics.median([r[4] for r in measured])
        medians[f"jobs{jobs}"] = wall
        rows.append(f"| {count} designs in one run, `--jobs {jobs}` | {_med([r[0] for r in measured])} | "
                    f"{_med([r[4] for r in measured])} | {cpu / wall:.2f} |")
    if 1 != cores:
        medians["speedup"] = medians["jobs1"] / medians[f"jobs{cores}"]
        rows.append(f"| speed-up of `--jobs {cores}` over `--jobs 1` (median wall) | {medians['speedup']:.2f}x | | |")
    some = files[:max(1, min(separate_max, count))]
    sep_wall = []
    for _ in range(max(1, repeat // 2)):
        t0 = time.perf_counter()
        for f in some:
            _run_measured(cmd + [f])
        sep_wall.append((time.perf_counter() - t0) * count / len(some))
    scaled = "" if len(some) == count else f" (timed over {len(some)}, scaled to {count})"
    rows.append(f"| {count} designs, one afecheck run each{scaled} | {_med(sep_wall)} | | |")
    return rows, medians


def _imports(design: Path) -> list[str]:
    """The costliest imports of a one-channel check (cumulative and own milliseconds, from ``python -X importtime``),
    afecheck's own modules and the libraries they pull in, with the total."""
    proc = subprocess.run([sys.executable, "-X", "importtime", "-m", "afecheck", "check", "--fail-on", "never",
                           str(design)], capture_output=True, text=True)
    rows, total = [], 0
    for line in proc.stderr.splitlines():
        m = re.match(r"import time:\s+(\d+) \|\s+(\d+) \|( *)(\S.*)$", line)
        if m:
            total += int(m.group(1))
            rows.append((int(m.group(2)), int(m.group(1)), len(m.group(3)), m.group(4).strip()))
    top = sorted(rows, reverse=True)[:14]
    return [f"| `{name}` | {depth // 2} | {cum / 1000:.0f} | {own / 1000:.0f} |" for cum, own, depth, name in top] + [
        f"| all {len(rows)} modules | | {total / 1000:.0f} | |"]


def _startup(design: Path, repeat: int) -> tuple[str, float]:
    """Median wall time of a one-channel check from the shell with afecheck's bytecode compiled first."""
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(ROOT / "afecheck")], capture_output=True)
    runs = [_run_measured(_afecheck_cmd() + ["check", "--fail-on", "never", str(design)]) for _ in range(repeat)]
    bare = [_run_measured([sys.executable, "-c", "pass"]) for _ in range(repeat)]
    wall = statistics.median([r[0] for r in runs])
    return (f"One-channel check from the shell, bytecode compiled: {_med([r[0] for r in runs])} s wall, "
            f"{_med([r[4] for r in runs])} s cpu (a bare `python -c pass`: {_med([r[0] for r in bare])} s)."), wall


def _targets(medians: dict[int, float], peaks: dict[int, float], batch: dict[str, float],
             startup: float | None) -> list[str]:
    """Each figure issue #16 asks for beside its target: met or not."""
    rows = ["| figure | target | measured | met |", "|---|---|---|---|"]

    def row(name: str, target: str, value: float | None, limit: float, unit: str, more: bool = False) -> None:
        if value is None:
            rows.append(f"| {name} | {target} | not measured | |")
            return
        met = value >= limit if more else value < limit
        rows.append(f"| {name} | {target} | {value:.2f} {unit} | {'yes' if met else 'no'} |")

    row("1000 channels end to end, median wall", "< 1.2 s", medians.get(1000), 1.2, "s")
    row("4000 channels end to end, median wall", "< 5 s", medians.get(4000), 5.0, "s")
    row("1000 channels peak memory", "< 100 MiB", peaks.get(1000), 100.0, "MiB")
    row("4000 channels peak memory", "< 150 MiB", peaks.get(4000), 150.0, "MiB")
    row("one-channel check, median wall", "< 0.25 s", startup, 0.25, "s")
    row("small designs, `--jobs 2` over `--jobs 1`", ">= 1.6x", batch.get("speedup"), 1.6, "x", more=True)
    return rows


def main(argv: list[str] | None = None) -> int:
    """Run the benchmark, print its tables, and write them into docs/BENCHMARK.md on request."""
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--channels", type=int, nargs="+", default=[1, 10, 100, 1000, 4000])
    p.add_argument("--repeat", type=int, default=5, help="runs per size and program (the median is reported)")
    p.add_argument("--format", choices=["json", "yaml"], default="json")
    p.add_argument("--batch", type=int, default=200, help="one-channel designs in the batch comparison (0: skip)")
    p.add_argument("--separate-max", type=int, default=40,
                   help="designs timed as separate runs in the batch comparison (the figure is scaled to --batch)")
    p.add_argument("--no-spice", action="store_true", help="skip the ngspice comparison")
    p.add_argument("--spice-max", type=int, default=1000,
                   help="largest size simulated by ngspice (its whole-circuit AC sweep grows faster than linearly)")
    p.add_argument("--vary", action="store_true",
                   help="also measure each size with every channel's values different (generator --vary): the plain "
                   "channels differ only in their names, which flatters any work shared between alike channels")
    p.add_argument("--write-doc", action="store_true", help="write the figures into docs/BENCHMARK.md")
    p.add_argument("--phases-of", nargs=2, help=argparse.SUPPRESS)
    args = p.parse_args(argv)
    if args.phases_of:
        _phases_child(*args.phases_of)
        return 0
    if args.vary and "vary" not in inspect.signature(write_design).parameters:
        p.error("--vary needs a generator with --vary (tests/tools/generate.py of this tree has none)")
    cmd = _afecheck_cmd()
    machine = _machine()
    out: list[str] = [f"Measured {dt.date.today().isoformat()}: {machine}. {args.format.upper()} input, "
                      f"{args.repeat} runs of each program per size, alternating; median (min-max)"
                      + ("; `N varied`: every channel with its own values (generator --vary)." if args.vary else "."),
                      ""]
    out += ["| N | parts | afecheck wall s | afecheck cpu s | afecheck peak MiB | ngspice wall s | ngspice cpu s "
            "| ngspice peak MiB | afecheck/ngspice (wall) |", "|---|---|---|---|---|---|---|---|---|"]
    phase_rows = ["| N | import s | first run s | load s | analyse s | rules s | report s | findings |",
                  "|---|---|---|---|---|---|---|---|"]
    notes: list[str] = []
    medians: dict[int, float] = {}
    peaks: dict[int, float] = {}
    print(out[0], flush=True)
    with tempfile.TemporaryDirectory(prefix="afebench-") as tmp:
        work = Path(tmp)
        first = write_design(work / "first.json", 1)
        for n, vary in [(n, v) for n in args.channels for v in ((False, True) if args.vary else (False,))]:
            label = f"{n} varied" if vary else f"{n}"
            name = f"rack{n}{'v' if vary else ''}.{args.format}"
            design = write_design(work / name, n, vary=True) if vary else write_design(work / name, n)
            skip = args.no_spice or not shutil.which("ngspice") or n > args.spice_max
            cir, why = (None, "skipped") if skip else _deck(design, work)
            if cir is None:
                notes.append(f"N={label}: ngspice: {why if not skip else 'not run (--no-spice or --spice-max)'}")
            elif (check := _spice_check(cir)) != "ok":
                notes.append(f"N={label}: {check}")
            ours, theirs = [], []
            for _ in range(args.repeat):
                ours.append(_run_measured(cmd + ["check", "--fail-on", "never", str(design)]))
                if cir is not None:
                    theirs.append(_run_measured([shutil.which("ngspice") or "ngspice", "-b", str(cir)]))
            if ours[0][2] != 0:
                notes.append(f"N={label}: afecheck exit {ours[0][2]}: {ours[0][3].strip()[-200:]}")
            walls = [r[0] for r in ours]
            median, peak = statistics.median(walls), max(r[1] for r in ours)
            if not vary:  # the targets are stated for the generator's plain designs
                medians[n], peaks[n] = median, peak
            spice_cells = "n/a | n/a | n/a | n/a"
            if theirs:
                spice_cells = (f"{_med([r[0] for r in theirs])} | {_med([r[4] for r in theirs])} | "
                               f"{max(r[1] for r in theirs):.0f} | "
                               f"{median / statistics.median([r[0] for r in theirs]):.2f}")
            row = (f"| {label} | {n * PARTS_PER_CHANNEL} | {_med(walls)} | {_med([r[4] for r in ours])} | "
                   f"{peak:.0f} | {spice_cells} |")
            out.append(row)
            print(row, flush=True)
            ph = _phases(design, first)
            if "error" in ph:
                notes.append(f"N={label}: phase timing failed: {ph['error']}")
            cells = " | ".join("n/a" if ph.get(k) is None else f"{ph[k]:.3f}"
                               for k in ("import", "first run", "load", "analyse", "rules", "report"))
            phase_rows.append(f"| {label} | {cells} | {ph.get('findings', 'n/a')} |")
        out += ["", "Time per phase, one fresh process per size (`import`: afecheck's modules and their dependencies, "
                "numpy and the analysis included; `first run`: a one-channel check before the measured one, so the "
                "cost every run pays once is not counted in the phases of the design):", "", *phase_rows]
        if 1000 in medians and 4000 in medians:
            out += ["", f"Growth 1000 -> 4000 channels: {medians[4000] / medians[1000]:.2f}x the time "
                    f"(linear would be 4x plus the fixed start-up); peak memory {peaks[1000]:.0f} MiB at 1000 "
                    f"channels and {peaks[4000]:.0f} MiB at 4000."]
        batch: dict[str, float] = {}
        if args.batch:
            rows, batch = _batch(work, args.batch, args.repeat, args.separate_max)
            out += ["", f"Batch: {args.batch} one-channel designs ({os.cpu_count()} cores; cpu/wall above 1 means "
                    "more than one core was busy).", "", "| how | wall s | cpu s | cpu/wall |", "|---|---|---|---|",
                    *rows]
        small = write_design(work / "one.json", 1)
        line, startup = _startup(small, args.repeat)
        out += ["", line, "", "Costliest imports of a one-channel check (`python -X importtime`; depth 0 is imported "
                "by afecheck's command line itself; cumulative includes what the module imports):", "",
                "| module | depth | cumulative ms | own ms |", "|---|---|---|---|", *_imports(small)]
        out += ["", "Issue #16 targets against this run:", "", *_targets(medians, peaks, batch, startup)]
    if notes:
        out += [""] + [f"Note: {n}" for n in notes]
    text = "\n".join(out) + "\n"
    print("\n".join(out[1:]))
    if args.write_doc:
        doc = DOC.read_text(encoding="utf-8")
        if START in doc and END in doc:
            head, rest = doc.split(START, 1)
            doc = head + START + "\n" + text + rest[rest.index(END):]
        else:
            doc = doc.rstrip("\n") + f"\n\n{START}\n{text}{END}\n"
        DOC.write_text(doc, encoding="utf-8")
        print(f"wrote the figures into {DOC.relative_to(ROOT)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
