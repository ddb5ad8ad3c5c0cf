"""A small mutation runner for afecheck/analysis and afecheck/checks: flip one operator or constant, run the tests.

Each mutant changes one AST node (a comparison, an arithmetic or boolean operator, a unary minus, a numeric or
boolean constant) in a copy of the repository, then runs a targeted fast test subset (``-x``); a mutant that
survives is run again against the ngspice reference harness (tests/reference), and counts as killed if that
fails. Usage (from the repository root)::

    nice -n 10 python tests/tools/mutate.py --sample 200 --seed 18 [--limit 40] [--floor 0.9] [--json out.json]

``--sample`` draws a fixed-seed subset of every mutant (the whole set takes hours on two shared cores);
``--floor`` makes the exit status 1 when the kill rate falls below it. Mutant ids are ``file:line:col:change``
(``#2``, ``#3`` for further operators starting at the same column).
"""

from __future__ import annotations

import argparse
import ast
import json
import random
import shutil
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
TARGETS = ("afecheck/analysis", "afecheck/checks")
COPY = ("afecheck", "tests", "rules", "sample_designs", "pyproject.toml")
FAST = {
    "afecheck/checks": [
        "tests/test_rules_loading.py", "tests/test_rules_stability.py", "tests/test_rules_headroom.py",
        "tests/test_rules_distortion.py", "tests/test_rules_integrator.py", "tests/test_rules_end_to_end.py",
        "tests/test_rules_agree_with_analysis.py", "tests/test_planted_bugs.py", "tests/test_rules_boundaries.py",
        "tests/test_mutation_kills.py", "tests/test_supply_limits.py", "tests/test_adc_drive.py",
        "tests/test_noise.py", "tests/test_dc_error.py", "tests/test_trust.py", "tests/test_rule_catalogue.py",
    ],
    "afecheck/analysis": [
        "tests/test_mna.py", "tests/test_loop.py", "tests/test_stage_quantities.py", "tests/test_stages.py",
        "tests/test_sources.py", "tests/test_signals.py", "tests/test_planted_bugs.py",
        "tests/test_rules_agree_with_analysis.py", "tests/test_published_values.py", "tests/test_spice_export.py",
        "tests/test_mutation_kills.py", "tests/test_rules_boundaries.py", "tests/test_noise.py",
        "tests/test_dc_error.py", "tests/test_adc_drive.py", "tests/test_supply_limits.py", "tests/test_curves.py",
        "tests/test_worst_cases.py", "tests/test_loop_crossings.py", "tests/test_stage_order.py",
        "tests/test_sensor_circuits.py", "tests/test_rules_loading.py", "tests/test_rules_stability.py",
        "tests/test_rules_headroom.py", "tests/test_rules_distortion.py", "tests/test_worst_cases_vs_ngspice.py",
        "tests/test_vs_ngspice.py",
    ],
}
# Tests that exercise a module most directly run first, so a mutant there fails fast under ``-x``; every
# tests/test_kill_<stem>*.py joins its module's list by name. Keys are module stems or checks/ sub-packages.
FIRST = {
    "noise": ["tests/test_noise.py"], "dc_error": ["tests/test_dc_error.py"],
    "adc_drive": ["tests/test_adc_drive.py"], "supply": ["tests/test_supply_limits.py"],
    "channel": ["tests/test_noise.py", "tests/test_dc_error.py", "tests/test_adc_drive.py"],
    "worksheet": ["tests/test_noise.py", "tests/test_adc_drive.py"], "curves": ["tests/test_curves.py"],
    "affine": ["tests/test_worst_cases.py"], "corners": ["tests/test_worst_cases.py"],
    "ranges": ["tests/test_worst_cases.py", "tests/test_signals.py"],
    "mna": ["tests/test_mna.py"], "loop": ["tests/test_loop.py", "tests/test_loop_crossings.py"],
    "spice": ["tests/test_spice_export.py"],
    "budgets": ["tests/test_noise.py", "tests/test_dc_error.py", "tests/test_rules_agree_with_analysis.py"],
    "adc": ["tests/test_adc_drive.py", "tests/test_rules_agree_with_analysis.py"],
    "limits": ["tests/test_supply_limits.py", "tests/test_rules_boundaries.py"],
}
SLOW = ["tests/reference"]
EQUIVALENT_FILE = ROOT / "tests" / "tools" / "equivalent_mutants.txt"
TIMEOUT_S = 300

_SWAP_CMP = {ast.Lt: ast.LtE, ast.LtE: ast.Lt, ast.Gt: ast.GtE, ast.GtE: ast.Gt, ast.Eq: ast.NotEq,
             ast.NotEq: ast.Eq, ast.Is: ast.IsNot, ast.IsNot: ast.Is, ast.In: ast.NotIn, ast.NotIn: ast.In}
_SWAP_BIN = {ast.Add: ast.Sub, ast.Sub: ast.Add, ast.Mult: ast.Div, ast.Div: ast.Mult, ast.Pow: ast.Mult,
             ast.FloorDiv: ast.Div, ast.Mod: ast.Mult}
_SWAP_BOOL = {ast.And: ast.Or, ast.Or: ast.And}


@dataclass(frozen=True)
class Mutant:
    """One change: where it is, what it does, and the mutated module source."""

    id: str
    file: str
    source: str


def _skip_nodes(tree: ast.AST) -> set[int]:
    """Nodes never mutated: docstrings, f-string parts, annotations, and anything under them."""
    skip: set[int] = set()

    def mark(node: ast.AST) -> None:
        for sub in ast.walk(node):
            skip.add(id(sub))

    for node in ast.walk(tree):
        if isinstance(node, ast.JoinedStr):
            mark(node)
        elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            if node.returns is not None:
                mark(node.returns)
            for a in node.args.args + node.args.kwonlyargs + node.args.posonlyargs:
                if a.annotation is not None:
                    mark(a.annotation)
        elif isinstance(node, ast.AnnAssign):
            mark(node.annotation)
        body = getattr(node, "body", None)
        if isinstance(body, list) and body and isinstance(body[0], ast.Expr) \
                and isinstance(body[0].value, ast.Constant) and isinstance(body[0].value.value, str):
            mark(body[0])
    return skip


def _changes(node: ast.AST) -> Iterator[tuple[str, callable]]:
    """(label, apply) for each way this node can be mutated; apply edits the node in place and returns an undo."""
    if isinstance(node, ast.Compare):
        for i, op in enumerate(node.ops):
            if type(op) in _SWAP_CMP:
                new = _SWAP_CMP[type(op)]

                def apply(node=node, i=i, new=new):
                    old = node.ops[i]
                    node.ops[i] = new()
                    return lambda: node.ops.__setitem__(i, old)
                yield f"{type(op).__name__}->{new.__name__}", apply
    elif isinstance(node, (ast.BinOp, ast.AugAssign)) and type(node.op) in _SWAP_BIN:
        new = _SWAP_BIN[type(node.op)]

        def apply(node=node, new=new):
            old = node.op
            node.op = new()
            return lambda: setattr(node, "op", old)
        yield f"{type(node.op).__name__}->{new.__name__}", apply
    elif isinstance(node, ast.BoolOp):
        new = _SWAP_BOOL[type(node.op)]

        def apply(node=node, new=new):
            old = node.op
            node.op = new()
            return lambda: setattr(node, "op", old)
        yield f"{type(node.op).__name__}->{new.__name__}", apply
    elif isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        def apply(node=node):
            old = node.op
            node.op = ast.UAdd()
            return lambda: setattr(node, "op", old)
        yield "drop-USub", apply
    elif isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.Not):
        def apply(node=node):
            # `not x` becomes `not not x`: the same truth value as x, without needing the parent node
            old = node.operand
            node.operand = ast.UnaryOp(op=ast.Not(), operand=old)
            return lambda: setattr(node, "operand", old)
        yield "drop-Not", apply
    elif isinstance(node, ast.Constant) and not isinstance(node.value, str):
        v = node.value
        if isinstance(v, bool):
            new_value = not v
        elif isinstance(v, int):
            new_value = v + 1
        elif isinstance(v, float):
            new_value = v * 2.0 if v != 0 else 1.0
        else:
            return

        def apply(node=node, new_value=new_value):
            old = node.value
            node.value = new_value
            return lambda: setattr(node, "value", old)
        yield f"const {v!r}->{new_value!r}", apply


def mutants(files: list[Path], only: set[str] | None = None) -> list[Mutant]:
    """Every mutant of every file, in a fixed order; with ``only``, the source is written out for those ids alone
    (the rest get an empty source: writing out thousands of modules costs minutes on a busy machine)."""
    out: list[Mutant] = []
    seen: dict[str, int] = {}
    for path in files:
        rel = path.relative_to(ROOT).as_posix()
        tree = ast.parse(path.read_text(encoding="utf-8"))
        skip = _skip_nodes(tree)
        for node in ast.walk(tree):
            if id(node) in skip:
                continue
            for label, apply in _changes(node):
                line, col = getattr(node, "lineno", 0), getattr(node, "col_offset", 0)
                mid = f"{rel}:{line}:{col}:{label}"
                seen[mid] = seen.get(mid, 0) + 1
                if seen[mid] > 1:  # nested operators starting at one column (a + b + c, 0 <= x <= 1)
                    mid = f"{mid}#{seen[mid]}"
                src = ""
                if only is None or mid in only:
                    undo = apply()
                    try:
                        src = ast.unparse(tree)
                    finally:
                        undo()
                out.append(Mutant(mid, rel, src))
    return out


def _area(file: str) -> str:
    return next(t for t in TARGETS if file.startswith(t))


def _tests_for(work: Path, file: str) -> list[str]:
    """The module's own tests first (FIRST and tests/test_kill_<key>*.py), then the rest of its area's subset."""
    parts = Path(file).with_suffix("").parts
    keys = [parts[-1]] + ([parts[2]] if parts[1] == "checks" and len(parts) > 3 else [])
    first = [t for k in keys for t in FIRST.get(k, [])]
    first += sorted(p.relative_to(work).as_posix() for k in keys for p in (work / "tests").glob(f"test_kill_{k}*.py"))
    kills = sorted(p.relative_to(work).as_posix() for p in (work / "tests").glob("test_kill_*.py"))
    return list(dict.fromkeys(first + FAST[_area(file)] + kills))


def equivalents(path: Path = EQUIVALENT_FILE) -> dict[str, str]:
    """Mutants recorded as equivalent (``id | reason`` per line, ``#`` comments): not run, and left out of the rate."""
    out: dict[str, str] = {}
    for line in path.read_text(encoding="utf-8").splitlines() if path.exists() else ():
        if line.strip() and not line.startswith("#"):
            mid, _, reason = line.partition(" | ")
            out[mid.strip()] = reason.strip()
    return out


def _pytest(work: Path, tests: list[str]) -> bool:
    """True when the tests pass (the mutant survives)."""
    tests = [t for t in tests if (work / t).exists()]
    cmd = [sys.executable, "-m", "pytest", "-x", "-q", "-p", "no:cacheprovider", "-m", "not slow", *tests]
    try:
        proc = subprocess.run(cmd, cwd=work, capture_output=True, text=True, timeout=TIMEOUT_S)
    except subprocess.TimeoutExpired:
        return False  # a mutant that hangs is caught by any run with a time limit
    if proc.returncode > 2:  # 3..5: pytest itself failed (usage, no tests): never count that as a kill
        raise SystemExit(f"pytest could not run {tests}:\n{proc.stdout[-2000:]}{proc.stderr[-2000:]}")
    return proc.returncode == 0  # 1: a test failed; 2: collection broke (the mutant does not import)


def run(sample: int | None, seed: int, report: Path | None, ids: list[str] | None = None,
        limit: int | None = None, tests: list[str] | None = None) -> float:
    files = sorted(p for t in TARGETS for p in (ROOT / t).rglob("*.py") if p.name != "__init__.py")
    every = mutants(files, only=set())
    chosen = random.Random(seed).sample(every, sample) if sample and sample < len(every) else every
    if ids:
        chosen = [m for m in every if m.id in set(ids)]
    chosen = chosen[:limit] if limit else chosen
    order = {m.id: k for k, m in enumerate(chosen)}
    chosen = sorted((m for m in mutants(files, only=set(order)) if m.id in order), key=lambda m: order[m.id])
    print(f"{len(every)} mutants in {len(files)} files; running {len(chosen)} (seed {seed})", flush=True)
    same = equivalents()
    results = []
    with tempfile.TemporaryDirectory(prefix="afecheck-mutants-") as tmp:
        work = Path(tmp)
        for name in COPY:
            src = ROOT / name
            (shutil.copytree if src.is_dir() else shutil.copy2)(src, work / name)
        everything = tests or list(dict.fromkeys(FAST["afecheck/checks"] + FAST["afecheck/analysis"]
                                                 + [t for m in chosen for t in _tests_for(work, m.file)]))
        if not _pytest(work, everything):  # once more, showing the failures: a test may be flaky under load
            proc = subprocess.run([sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "-m", "not slow",
                                   "-x", *[t for t in everything if (work / t).exists()]],
                                  cwd=work, capture_output=True, text=True, timeout=TIMEOUT_S)
            if proc.returncode != 0:
                raise SystemExit(f"the unmutated test subset fails: fix the suite first\n{proc.stdout[-3000:]}")
            print("warning: the unmutated subset failed once and passed when run again (a flaky test)", flush=True)
        for k, m in enumerate(chosen, 1):
            if m.id in same:
                results.append({"id": m.id, "killed": False, "equivalent": same[m.id], "seconds": 0.0})
                print(f"[{k}/{len(chosen)}] equivalent {m.id} ({same[m.id]})", flush=True)
                continue
            target = work / m.file
            original = target.read_text(encoding="utf-8")
            target.write_text(m.source, encoding="utf-8")
            t0 = time.monotonic()
            try:
                survived = _pytest(work, tests or _tests_for(work, m.file))
                if survived and not tests and _area(m.file) == "afecheck/analysis":
                    survived = _pytest(work, SLOW)
            finally:
                target.write_text(original, encoding="utf-8")
            results.append({"id": m.id, "killed": not survived, "seconds": round(time.monotonic() - t0, 1)})
            print(f"[{k}/{len(chosen)}] {'killed  ' if not survived else 'SURVIVED'} {m.id}", flush=True)
    killed = sum(r["killed"] for r in results)
    counted = [r for r in results if "equivalent" not in r]
    rate = killed / len(counted) if counted else 1.0
    for area in TARGETS:
        part = [r for r in counted if r["id"].startswith(area)]
        print(f"{area}: {sum(r['killed'] for r in part)}/{len(part)} killed")
    print(f"kill rate {killed}/{len(counted)} = {rate:.1%} ({len(results) - len(counted)} recorded equivalent left "
          f"out; {killed}/{len(results)} = {killed / max(len(results), 1):.1%} counting them as survivors)")
    for r in counted:
        if not r["killed"]:
            print(f"survivor: {r['id']}")
    if report is not None:
        report.write_text(json.dumps({"seed": seed, "sample": len(chosen), "total": len(every), "killed": killed,
                                      "equivalent": len(results) - len(counted), "rate": rate, "results": results},
                                     indent=1), encoding="utf-8")
    return rate


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sample", type=int, default=None, help="fixed-seed subset size (default: every mutant)")
    ap.add_argument("--seed", type=int, default=18)
    ap.add_argument("--floor", type=float, default=0.0, help="fail below this kill rate (0..1)")
    ap.add_argument("--json", type=Path, default=None, help="write every result here")
    ap.add_argument("--list", action="store_true", help="only count the mutants")
    ap.add_argument("--limit", type=int, default=None, help="run only the first N of the sample (same order)")
    ap.add_argument("--ids", nargs="*", default=None, help="run only these mutant ids (to re-check survivors)")
    ap.add_argument("--tests", nargs="*", default=None,
                    help="run only these test files against each mutant (to see which test kills it)")
    args = ap.parse_args(argv)
    if args.list:
        files = sorted(p for t in TARGETS for p in (ROOT / t).rglob("*.py") if p.name != "__init__.py")
        print(len(mutants(files, only=set())))
        return 0
    rate = run(args.sample, args.seed, args.json, args.ids, args.limit, args.tests)
    return 0 if rate >= args.floor else 1


if __name__ == "__main__":
    raise SystemExit(main())
