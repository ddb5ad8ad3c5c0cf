"""A small mutation runner for afecheck/analysis and afecheck/checks: flip one operator or constant, run the tests.

Each mutant changes one AST node (a comparison, an arithmetic or boolean operator, a unary minus, a numeric or
boolean constant) in a copy of the repository. Once per run, the unmutated copy's test pool runs under coverage.py
with one context per test, which gives a map from each target line to the tests that execute it; a mutant then
runs only the tests that execute its line (its module's own tests first, the quickest first, ``-x``). A mutant no
test executes survives at once ("not covered"). A mutant of analysis/ that survives is run again against the
covering ngspice reference tests (tests/reference) and counts as killed if one fails. Usage (repository root)::

    nice -n 10 python tests/tools/mutate.py --sample 200 --seed 18 [--floor 0.9] [--json out.json]

The sample is stable against unrelated edits: every mutant has a key that holds no line number (file, enclosing
function, the mutated line's text, the change, its occurrence in that function), and ``--sample N`` takes the N
mutants whose sha256 of seed and key is smallest, so editing one function moves only that function's mutants.
Output shows the readable id ``file:line:col:change`` (``#2``, ``#3`` for further operators at one column).
"""

from __future__ import annotations

import argparse
import ast
import hashlib
import io
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
import tokenize
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
        "tests/test_vs_ngspice.py", "tests/test_unit_memo.py", "tests/test_loop_extend_batch.py",
    ],
}
# Sensor, budget, memo and coverage tests reach both areas; with the coverage map a mutant runs only those of
# them that execute its line, so the pool holds every default-suite file that drives analysis or rule code.
SHARED = [
    "tests/test_budget_sensors.py", "tests/test_cold_junction.py", "tests/test_declared_fields.py",
    "tests/test_edge_cases.py", "tests/test_nonlinearity.py", "tests/test_norton_spice_import.py",
    "tests/test_samples.py", "tests/test_sensor_kinds.py", "tests/test_sensor_measurand.py",
    "tests/test_sensor_self_heating.py", "tests/test_sensor_topologies.py", "tests/test_sensors.py",
    "tests/test_solve_memo.py", "tests/test_spice_inductors_currents.py", "tests/test_macromodel_placement.py",
]
for _area in FAST.values():
    _area.extend(SHARED)
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
    "dc_accuracy": ["tests/test_sensor_self_heating.py", "tests/test_cold_junction.py"],
    "declared": ["tests/test_declared_fields.py"], "solve_memo": ["tests/test_solve_memo.py"],
    "nonlinearity": ["tests/test_nonlinearity.py"], "unit_memo": ["tests/test_unit_memo.py"],
}
SLOW = ["tests/reference"]
# Tests that judge the package's class definitions themselves (a record's frozen and eq flags): what they execute
# is dataclass-generated code outside the mutated file, so coverage never credits them to a decorator's line.
RECORD_TESTS = {"tests/test_kill_frozen_records.py"}
EQUIVALENT_FILE = ROOT / "tests" / "tools" / "equivalent_mutants.txt"
PLUGIN = "mutate_plugin"  # tests/tools/mutate_plugin.py
FORKS = "mutate_forks"  # tests/tools/mutate_forks.py
MAP_VERSION = 1
UNMAPPED = {"tests/tools/equivalent_mutants.txt", "tests/tools/mutate.py", "tests/tools/mutate_forks.py"}
TIMEOUT_S = 300
RECORD_TIMEOUT_S = 3600

_SWAP_CMP = {ast.Lt: ast.LtE, ast.LtE: ast.Lt, ast.Gt: ast.GtE, ast.GtE: ast.Gt, ast.Eq: ast.NotEq,
             ast.NotEq: ast.Eq, ast.Is: ast.IsNot, ast.IsNot: ast.Is, ast.In: ast.NotIn, ast.NotIn: ast.In}
_SWAP_BIN = {ast.Add: ast.Sub, ast.Sub: ast.Add, ast.Mult: ast.Div, ast.Div: ast.Mult, ast.Pow: ast.Mult,
             ast.FloorDiv: ast.Div, ast.Mod: ast.Mult}
_SWAP_BOOL = {ast.And: ast.Or, ast.Or: ast.And}


@dataclass(frozen=True)
class Mutant:
    """One change: its readable id, its line-independent key, where it runs, and the mutated module source.

    ``when`` says when the mutated code runs: ``call`` (inside a function body: the tests that execute ``lines``),
    ``define`` (a default or decorator, evaluated when the function is defined: the tests that execute the
    function's body, ``lines``) or ``import`` (module or class level: every test that runs the module)."""

    id: str
    key: str
    file: str
    function: str
    when: str
    lines: tuple[int, ...]
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


def _places(tree: ast.Module) -> dict[int, tuple[str, str, tuple[int, ...] | None]]:
    """For every node: (enclosing function's dotted name, when it runs, the lines whose tests reach it; None for the
    node's own lines)."""
    out: dict[int, tuple[str, str, tuple[int, ...] | None]] = {}

    def visit(node: ast.AST, qual: str, when: str, reach: tuple[int, ...] | None) -> None:
        out[id(node)] = (qual, when, reach)
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
            body = node.body if isinstance(node.body, list) else [node.body]
            # defaults and decorators run when the function is defined: at import for a top-level function (then
            # the tests that run its body reach them), at each call of the enclosing function for a nested one
            head = ("call", None) if when == "call" else \
                ("define", tuple(range(body[0].lineno, (node.end_lineno or body[0].lineno) + 1)))
            name = getattr(node, "name", None)
            inner = (f"{qual}.{name}" if qual else name) if name else qual
            for sub in [*getattr(node, "decorator_list", []), node.args]:  # named after the function they shape
                visit(sub, inner, *head)
            for child in body:
                visit(child, inner, "call", None)
        elif isinstance(node, ast.ClassDef):
            inner = f"{qual}.{node.name}" if qual else node.name
            for child in [*node.decorator_list, *node.bases, *node.keywords, *node.body]:
                visit(child, inner, when, reach)
        else:
            for child in ast.iter_child_nodes(node):
                visit(child, qual, when, reach)

    for child in tree.body:
        visit(child, "", "import", ())
    return out


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


def _code_lines(text: str) -> list[str]:
    """The file's lines with comments cut off and ends stripped (a comment edit does not move a mutant's key)."""
    lines = text.splitlines()
    for tok in tokenize.generate_tokens(io.StringIO(text).readline):
        if tok.type == tokenize.COMMENT:
            row, col = tok.start
            lines[row - 1] = lines[row - 1][:col]
    return [ln.strip() for ln in lines]


def mutant_key(file: str, function: str, change: str, occurrence: int, text: str) -> str:
    """The line-independent key: what it changes and where, by name and by the text of its line."""
    return f"{file} | {function or '<module>'} | {change} | {occurrence} | {text}"


def mutants(files: list[Path], only: set[str] | None = None, root: Path = ROOT) -> list[Mutant]:
    """Every mutant of every file, in a fixed order; with ``only`` (ids or keys), the source is written out for those
    alone (the rest get an empty source: writing out thousands of modules costs minutes on a busy machine)."""
    out: list[Mutant] = []
    seen: dict[str, int] = {}
    for path in files:
        rel = path.relative_to(root).as_posix()
        text = path.read_text(encoding="utf-8")
        lines = _code_lines(text)
        tree = ast.parse(text)
        skip = _skip_nodes(tree)
        places = _places(tree)
        occurrences: dict[tuple[str, str, str], int] = {}
        for node in ast.walk(tree):
            if id(node) in skip:
                continue
            for label, apply in _changes(node):
                line, col = getattr(node, "lineno", 0), getattr(node, "col_offset", 0)
                mid = f"{rel}:{line}:{col}:{label}"
                seen[mid] = seen.get(mid, 0) + 1
                if seen[mid] > 1:  # nested operators starting at one column (a + b + c, 0 <= x <= 1)
                    mid = f"{mid}#{seen[mid]}"
                function, when, reach = places.get(id(node), ("", "import", ()))
                if reach is None:
                    reach = tuple(range(line, (getattr(node, "end_lineno", None) or line) + 1))
                stripped = lines[line - 1] if 0 < line <= len(lines) else ""
                group = (function, stripped, label)
                occurrences[group] = occurrences.get(group, 0) + 1
                key = mutant_key(rel, function, label, occurrences[group] - 1, stripped)
                src = ""
                if only is None or mid in only or key in only:
                    undo = apply()
                    try:
                        src = ast.unparse(tree)
                    finally:
                        undo()
                out.append(Mutant(mid, key, rel, function or "<module>", when, tuple(reach or ()), src))
    return out


def stable_sample(every: list[Mutant], seed: int, size: int | None) -> list[Mutant]:
    """The ``size`` mutants whose sha256(seed, key) is smallest, in that order: a nested, edit-stable sample."""
    ranked = sorted(every, key=lambda m: hashlib.sha256(f"{seed}\n{m.key}".encode()).hexdigest())
    return ranked[:size] if size else ranked


def _area(file: str) -> str:
    return next((t for t in TARGETS if file.startswith(t)), file)


def _module_keys(file: str) -> list[str]:
    parts = Path(file).with_suffix("").parts
    return [parts[-1]] + ([parts[2]] if len(parts) > 3 and parts[1] == "checks" else [])


def _first_files(work: Path, file: str) -> list[str]:
    """The module's own test files: FIRST and tests/test_kill_<key>*.py."""
    keys = _module_keys(file)
    first = [t for k in keys for t in FIRST.get(k, [])]
    first += sorted(p.relative_to(work).as_posix() for k in keys for p in (work / "tests").glob(f"test_kill_{k}*.py"))
    return list(dict.fromkeys(first))


def _tests_for(work: Path, file: str) -> list[str]:
    """The module's own tests first (FIRST and tests/test_kill_<key>*.py), then the rest of its area's subset."""
    kills = sorted(p.relative_to(work).as_posix() for p in (work / "tests").glob("test_kill_*.py"))
    return list(dict.fromkeys(_first_files(work, file) + FAST.get(_area(file), []) + kills))


def equivalents(path: Path = EQUIVALENT_FILE) -> dict[str, str]:
    """Mutants recorded as equivalent, with the reason: not run, and left out of the rate.

    A line is ``key || reason`` (the key as ``mutant_key`` writes it: file | function | change | occurrence | line
    text) or, in the older form, ``file:line:col:change | reason``; ``#`` starts a comment line."""
    out: dict[str, str] = {}
    for line in path.read_text(encoding="utf-8").splitlines() if path.exists() else ():
        if not line.strip() or line.startswith("#"):
            continue
        if " || " in line:
            key, _, reason = line.partition(" || ")
        else:
            key, _, reason = line.partition(" | ")
        out[key.strip()] = reason.strip()
    return out


def equivalent_reason(m: Mutant, same: dict[str, str]) -> str | None:
    """The recorded reason this mutant is equivalent, matched by its key or (older entries) its readable id."""
    return same.get(m.key, same.get(m.id))


def tree_hash(root: Path, names: tuple[str, ...] = COPY, pool: list[str] | None = None) -> str:
    """sha256 over every file the mapped tests can see (path and bytes), so a coverage map is never used on other
    code. Left out: test modules outside the pool (no test imports another's module), the runner's own files and
    the equivalents list, none of which changes what a mapped test runs."""
    h = hashlib.sha256()
    for name in names:
        top = root / name
        paths = [top] if top.is_file() else sorted(p for p in top.rglob("*") if p.is_file())
        for p in paths:
            rel = p.relative_to(root).as_posix()
            if "__pycache__" in p.parts or rel in UNMAPPED or p.suffix == ".pyc":
                continue
            if pool is not None and p.name.startswith("test_") and p.suffix == ".py" \
                    and not any(rel == t or rel.startswith(t.rstrip("/") + "/") for t in pool):
                continue
            h.update(rel.encode() + b"\0" + p.read_bytes() + b"\0")
    return h.hexdigest()


def _env(work: Path, **extra: str) -> dict[str, str]:
    """The environment of a pytest run with our plugin importable (copied alone, so no other tool shadows a name)."""
    plugin_dir = work / ".mutant-map" / "plugin"
    if not (plugin_dir / f"{PLUGIN}.py").exists():
        plugin_dir.mkdir(parents=True, exist_ok=True)
        for name in (PLUGIN, FORKS):
            shutil.copy2(Path(__file__).with_name(f"{name}.py"), plugin_dir)
    env = dict(os.environ, **extra)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(plugin_dir), env.get("PYTHONPATH")) if p)
    return env


def record_map(work: Path, pool: list[str], targets: tuple[str, ...], tree: str) -> dict:
    """Run the pool once on the unmutated copy under coverage, one context per test; return the line → tests map.

    Tests that fail on the unmutated copy are left out of the map (they could only make false kills)."""
    out_dir = work / ".mutant-map" / "record"
    shutil.rmtree(out_dir, ignore_errors=True)
    out_dir.mkdir(parents=True)
    sources = os.pathsep.join(str(work / t) for t in targets)
    cmd = [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "-p", PLUGIN, "-m", "not slow",
           *[t for t in pool if (work / t).exists()]]
    proc = subprocess.run(cmd, cwd=work, capture_output=True, text=True, timeout=RECORD_TIMEOUT_S,
                          env=_env(work, AFECHECK_MUTANT_RECORD=str(out_dir), AFECHECK_MUTANT_SOURCES=sources))
    if proc.returncode not in (0, 1) or not (out_dir / "tests.json").exists():
        raise SystemExit(f"the coverage pass could not run:\n{proc.stdout[-3000:]}{proc.stderr[-2000:]}")
    return build_map(out_dir, work, targets, tree, pool)


def build_map(out_dir: Path, work: Path, targets: tuple[str, ...], tree: str, pool: list[str]) -> dict:
    """Read the coverage data and the plugin's test list into the map: {file: {line: [test index]}}, -1 = import."""
    import coverage

    tests_info = json.loads((out_dir / "tests.json").read_text(encoding="utf-8"))
    failed = sorted(n for n, t in tests_info.items() if t.get("failed"))
    tests = [n for n in tests_info if n not in set(failed)]
    index = {n: k for k, n in enumerate(tests)}
    users: dict[str, list[int]] = {}
    for n in tests:
        for ctx in tests_info[n]["shared"]:
            users.setdefault(ctx, []).append(index[n])
    data = coverage.CoverageData(basename=str(out_dir / "coverage.db"))
    data.read()
    lines: dict[str, dict[str, list[int]]] = {}
    for measured in data.measured_files():
        try:
            rel = Path(measured).resolve().relative_to(work.resolve()).as_posix()
        except ValueError:  # the installed package, not the copy: never the code the mutants change
            continue
        if not rel.startswith(targets):
            continue
        per_line: dict[str, list[int]] = {}
        for lineno, contexts in data.contexts_by_lineno(measured).items():
            ids: set[int] = set()
            for ctx in contexts:
                if ctx == "":
                    ids.add(-1)
                elif ctx in index:
                    ids.add(index[ctx])
                else:
                    ids.update(users.get(ctx, ()))
            per_line[str(lineno)] = sorted(ids)
        lines[rel] = per_line
    if not lines:
        raise SystemExit(f"the coverage pass saw no line of {', '.join(targets)} in {work}: is another copy imported?")
    return {"version": MAP_VERSION, "tree": tree, "pool": sorted(pool), "tests": tests, "failed": failed,
            "seconds": [tests_info[n]["seconds"] for n in tests], "lines": lines}


def load_map(path: Path, tree: str, pool: list[str]) -> tuple[dict | None, str]:
    """A saved map, or None and why not: a map recorded on another tree or test pool is refused, never used."""
    if not path.exists():
        return None, f"no coverage map at {path}"
    try:
        cmap = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        return None, f"coverage map {path} is unreadable ({exc})"
    if cmap.get("version") != MAP_VERSION:
        return None, f"coverage map {path} has format {cmap.get('version')}, this runner writes {MAP_VERSION}"
    if cmap.get("tree") != tree:
        return None, f"coverage map {path} was recorded on another source tree (files changed since)"
    if cmap.get("pool") != sorted(pool):
        return None, f"coverage map {path} was recorded over another test pool"
    return cmap, "reused"


def _importers(cmap: dict, file: str) -> set[str]:
    """Target files that import this module (a module-level constant matters where it is imported too)."""
    dotted = Path(file).with_suffix("").as_posix().replace("/", ".")
    return {f for f, names in cmap.get("_imports", {}).items() if dotted in names and f != file}


def covering_tests(m: Mutant, cmap: dict) -> set[int]:
    """Indices of the tests that execute the mutated code (see Mutant.when)."""
    per_line = cmap["lines"].get(m.file, {})

    def whole(file: str) -> set[int]:
        return {t for ids in cmap["lines"].get(file, {}).values() for t in ids if t >= 0}

    found: set[int] = set()
    for line in m.lines:
        found.update(per_line.get(str(line), ()))
    if m.when == "import" or -1 in found:  # runs at import: every test of the module, and of modules importing it
        found = whole(m.file)
        for other in _importers(cmap, m.file):
            found |= whole(other)
        found |= {k for k, name in enumerate(cmap["tests"]) if name.split("::")[0] in RECORD_TESTS}
    found.discard(-1)
    return found


def order_tests(m: Mutant, cmap: dict, ids: set[int], first_files: list[str]) -> tuple[list[str], list[str]]:
    """(fast tests, reference tests) for a mutant: its module's own test files first, each group quickest first."""
    tests, seconds = cmap["tests"], cmap["seconds"]
    first = set(first_files)

    def rank(k: int) -> tuple[int, float, str]:
        return (0 if tests[k].split("::")[0] in first else 1, seconds[k], tests[k])

    ordered = [tests[k] for k in sorted(ids, key=rank)]
    reference = [n for n in ordered if any(n.startswith(s + "/") for s in SLOW)]
    return [n for n in ordered if n not in set(reference)], reference


class ForkServer:
    """A long-lived process in the copy (tests/tools/mutate_forks.py) that forks a ready pytest for each run."""

    def __init__(self, work: Path) -> None:
        self.work = work
        env = _env(work)
        self.proc = subprocess.Popen([sys.executable, str(work / ".mutant-map" / "plugin" / f"{FORKS}.py")],
                                     cwd=work, env=env, stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True)
        if json.loads(self.proc.stdout.readline() or "{}").get("ready") is not True:
            raise SystemExit("the pytest fork server did not start")

    def run(self, args: list[str], env: dict[str, str], timeout: float) -> tuple[int | None, str]:
        """(exit status or None after a time-out, the run's output)."""
        log = self.work / ".mutant-map" / "last-run.log"
        self.proc.stdin.write(json.dumps({"args": args, "env": env, "timeout": timeout, "log": str(log)}) + "\n")
        self.proc.stdin.flush()
        code = json.loads(self.proc.stdout.readline())["code"]
        return code, log.read_text(encoding="utf-8", errors="replace") if log.exists() else ""

    def close(self) -> None:
        self.proc.stdin.close()
        self.proc.wait(timeout=60)


def _pytest(work: Path, tests: list[str], nodes: list[str] | None = None, server: ForkServer | None = None,
            timeout: float = TIMEOUT_S) -> bool:
    """True when the tests pass (the mutant survives); ``nodes`` runs just those node ids, in that order."""
    extra: dict[str, str] = {}
    if nodes is not None:
        chosen = work / ".mutant-map" / "chosen.txt"
        chosen.parent.mkdir(exist_ok=True)
        chosen.write_text("\n".join(nodes) + "\n", encoding="utf-8")
        tests = list(dict.fromkeys(n.split("::")[0] for n in nodes))
        extra["AFECHECK_MUTANT_TESTS"] = str(chosen)
    tests = [t for t in tests if (work / t).exists()]
    plugin = ["-p", PLUGIN] if nodes is not None else []
    args = ["-x", "-q", "-p", "no:cacheprovider", *plugin, "-m", "not slow", *tests]
    if server is not None:
        code, output = server.run(args, extra, timeout)
        if code is None:
            return False  # a mutant that hangs is caught by any run with a time limit
    else:
        try:
            proc = subprocess.run([sys.executable, "-m", "pytest", *args], cwd=work, capture_output=True, text=True,
                                  timeout=timeout, env=_env(work, **extra) if extra else None)
        except subprocess.TimeoutExpired:
            return False
        code, output = proc.returncode, proc.stdout + proc.stderr
    if code > 2 or code < 0:  # 3..5: pytest itself failed (usage, no tests): never count that as a kill
        raise SystemExit(f"pytest could not run {tests} (status {code}):\n{output[-3000:]}")
    return code == 0  # 1: a test failed; 2: collection broke (the mutant does not import)


def _forget_bytecode(path: Path) -> None:
    """Drop the module's cached bytecode: two mutants of one size written within a second share an mtime."""
    for pyc in (path.parent / "__pycache__").glob(f"{path.stem}.*.pyc"):
        pyc.unlink(missing_ok=True)


def _imported(path: Path, rel: str) -> set[str]:
    """Dotted names of the modules a file imports (``from .x import y`` counts x and x.y)."""
    package = Path(rel).with_suffix("").parts[:-1]
    names: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = list(package[:len(package) - node.level + 1]) if node.level else []
            base += node.module.split(".") if node.module else []
            names.add(".".join(base))
            names.update(".".join([*base, a.name]) for a in node.names)
    return names


def _with_imports(cmap: dict, work: Path, targets: tuple[str, ...]) -> dict:
    """Attach each target file's imported modules (for _importers); cheap, so not saved in the map."""
    imports = {p.relative_to(work).as_posix(): _imported(p, p.relative_to(work).as_posix())
               for t in targets for p in (work / t).rglob("*.py")}
    return {**cmap, "_imports": imports}


def _stages(fast: list[str], first_files: list[str]) -> list[list[str]]:
    """Split a mutant's tests in two runs: those in its module's own test files (or, with none, in the file of its
    quickest test), then the rest. Most mutants die in the first, which then collects one or two files, not ten."""
    if not fast:
        return []
    files = [n.split("::")[0] for n in fast]
    own = set(first_files) & set(files) or {files[0]}
    head = [n for n, f in zip(fast, files, strict=True) if f in own]
    tail = [n for n, f in zip(fast, files, strict=True) if f not in own]
    return [head, tail] if tail else [head]


def _limit(cmap: dict | None, nodes: list[str]) -> float:
    """Time allowed for a run: 60 s plus ten times what its tests took in the coverage pass (itself slowed by the
    tracer), at most TIMEOUT_S; a mutant past it hangs, and counts as killed."""
    if cmap is None:
        return TIMEOUT_S
    took = dict(zip(cmap["tests"], cmap["seconds"], strict=True))
    return min(TIMEOUT_S, 60.0 + 10.0 * sum(took.get(n, 0.0) for n in nodes))


def _run_one(m: Mutant, work: Path, cmap: dict | None, tests: list[str] | None,
             server: ForkServer | None) -> dict:
    """Plant one mutant in the copy, run the tests that reach it, put the module back; the result record."""
    t0 = time.monotonic()
    if cmap is not None:
        fast, reference = order_tests(m, cmap, covering_tests(m, cmap), _first_files(work, m.file))
    else:
        fast, reference = list(tests or _tests_for(work, m.file)), ([] if tests else SLOW)
    if _area(m.file) != "afecheck/analysis":
        reference = []  # the ngspice follow-up is for the analysis, as before the map
    if not fast and not reference:
        return {"id": m.id, "key": m.key, "killed": False, "covered": False, "seconds": 0.0, "tests": 0}
    target = work / m.file
    original = target.read_text(encoding="utf-8")
    target.write_text(m.source, encoding="utf-8")
    _forget_bytecode(target)
    nodes = cmap is not None
    try:
        survived = True
        for part in _stages(fast, _first_files(work, m.file)) if nodes else [fast]:
            survived = survived and _pytest(work, part, part if nodes else None, server, _limit(cmap, part))
        if survived and reference:
            survived = _pytest(work, reference, reference if nodes else None, server, _limit(cmap, reference))
    finally:
        target.write_text(original, encoding="utf-8")
        _forget_bytecode(target)
    return {"id": m.id, "key": m.key, "killed": not survived, "covered": True,
            "seconds": round(time.monotonic() - t0, 1), "tests": len(fast) + len(reference)}


def _prepare(work: Path, chosen: list[Mutant], tests: list[str] | None, use_map: bool,
             map_file: Path | None) -> dict | None:
    """Copy the tree, then record (or reuse) the coverage map, or check the unmutated subset when there is none."""
    for name in COPY:
        src = ROOT / name
        (shutil.copytree if src.is_dir() else shutil.copy2)(src, work / name)
    kills = sorted(p.relative_to(work).as_posix() for p in (work / "tests").glob("test_kill_*.py"))
    pool = list(tests) if tests else list(dict.fromkeys(
        FAST["afecheck/checks"] + FAST["afecheck/analysis"] + kills + SLOW))
    if not use_map:
        everything = list(dict.fromkeys(pool + [t for m in chosen for t in _tests_for(work, m.file)]))
        if not _pytest(work, [t for t in everything if t not in SLOW]):
            raise SystemExit("the unmutated test subset fails: fix the suite first")
        return None
    tree = tree_hash(ROOT, COPY, pool)
    cmap, why = load_map(map_file, tree, pool) if map_file else (None, "")
    if cmap is None:
        if map_file is not None and map_file.exists():
            print(f"{why}: recording a new one", flush=True)
        t0 = time.monotonic()
        cmap = record_map(work, pool, TARGETS, tree)
        print(f"coverage pass: {len(cmap['tests'])} tests in {time.monotonic() - t0:.0f} s", flush=True)
        if map_file:
            map_file.write_text(json.dumps(cmap), encoding="utf-8")
    else:
        print(f"coverage map {map_file} reused ({len(cmap['tests'])} tests)", flush=True)
    for name in cmap["failed"]:
        print(f"warning: left out, fails on the unmutated tree: {name}", flush=True)
    return _with_imports(cmap, work, TARGETS)


def _summary(results: list[dict], t_setup: float) -> tuple[int, float]:
    """Print the rate per area, the time per mutant and the survivors; (killed, rate)."""
    killed = sum(r["killed"] for r in results)
    counted = [r for r in results if "equivalent" not in r]
    rate = killed / len(counted) if counted else 1.0
    for area in TARGETS:
        part = [r for r in counted if r["id"].startswith(area)]
        print(f"{area}: {sum(r['killed'] for r in part)}/{len(part)} killed")
    ran = [r["seconds"] for r in counted if r.get("covered")]
    print(f"kill rate {killed}/{len(counted)} = {rate:.1%} ({len(results) - len(counted)} recorded equivalent left "
          f"out; {killed}/{len(results)} = {killed / max(len(results), 1):.1%} counting them as survivors)")
    print(f"time: set-up {t_setup:.0f} s, {sum(ran) / max(len(ran), 1):.1f} s per mutant run "
          f"({len(ran)} run, {len(counted) - len(ran)} not covered)")
    for r in counted:
        if not r["killed"]:
            print(f"survivor: {_survivor_line(r)}")
    return killed, rate


def _survivor_line(r: dict) -> str:
    """``readable id  [file function]``, with ``(not covered)`` when no test runs the code."""
    m_file, m_fn = r["key"].split(" | ")[:2]
    return f"{r['id']}  [{m_file} {m_fn}]" + ("" if r.get("covered", True) else " (not covered)")


def run(sample: int | None, seed: int, report: Path | None, ids: list[str] | None = None,
        limit: int | None = None, tests: list[str] | None = None, map_file: Path | None = None,
        use_map: bool = True, survivors_file: Path | None = None, forks: bool = True) -> float:
    files = sorted(p for t in TARGETS for p in (ROOT / t).rglob("*.py") if p.name != "__init__.py")
    every = mutants(files, only=set())
    chosen = stable_sample(every, seed, sample)
    if ids:
        wanted = set(ids)
        chosen = [m for m in every if m.id in wanted or m.key in wanted]
    chosen = chosen[:limit] if limit else chosen
    order = {m.key: k for k, m in enumerate(chosen)}
    chosen = sorted((m for m in mutants(files, only=set(order)) if m.key in order), key=lambda m: order[m.key])
    print(f"{len(every)} mutants in {len(files)} files; running {len(chosen)} (seed {seed})", flush=True)
    same = equivalents()
    results = []
    t_start = time.monotonic()
    if survivors_file is not None:
        survivors_file.write_text("", encoding="utf-8")
    with tempfile.TemporaryDirectory(prefix="afecheck-mutants-") as tmp:
        work = Path(tmp)
        cmap = _prepare(work, chosen, tests, use_map, map_file)
        server = ForkServer(work) if forks else None
        t_setup = time.monotonic() - t_start
        try:
            for k, m in enumerate(chosen, 1):
                where = f"{m.id} in {m.function}"
                reason = equivalent_reason(m, same)
                if reason is not None:
                    results.append({"id": m.id, "key": m.key, "killed": False, "equivalent": reason, "seconds": 0.0})
                    print(f"[{k}/{len(chosen)}] equivalent {where} ({reason})", flush=True)
                    continue
                r = _run_one(m, work, cmap, tests, server)
                results.append(r)
                if survivors_file is not None and not r["killed"]:  # as found, for whoever writes the kill tests
                    with survivors_file.open("a", encoding="utf-8") as out:
                        out.write(_survivor_line(r) + "\n")
                verdict = "killed  " if r["killed"] else "SURVIVED"
                how = f"{r['tests']} tests, {r['seconds']:.1f} s" if r["covered"] else "not covered: no test runs it"
                print(f"[{k}/{len(chosen)}] {verdict} {where} ({how})", flush=True)
        finally:
            if server is not None:
                server.close()
    killed, rate = _summary(results, t_setup)
    if report is not None:
        report.write_text(json.dumps({"seed": seed, "sample": len(chosen), "total": len(every), "killed": killed,
                                      "equivalent": sum("equivalent" in r for r in results), "rate": rate,
                                      "setup_seconds": round(t_setup, 1), "results": results},
                                     indent=1), encoding="utf-8")
    return rate


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sample", type=int, default=None, help="size of the seeded, edit-stable sample (default: all)")
    ap.add_argument("--seed", type=int, default=18)
    ap.add_argument("--floor", type=float, default=0.0, help="fail below this kill rate (0..1)")
    ap.add_argument("--json", type=Path, default=None, help="write every result here")
    ap.add_argument("--list", action="store_true", help="only count the mutants")
    ap.add_argument("--keys", action="store_true",
                    help="print the sample (or --ids) as 'readable id', then its key (for equivalent_mutants.txt)")
    ap.add_argument("--limit", type=int, default=None, help="run only the first N of the sample (same order)")
    ap.add_argument("--ids", nargs="*", default=None, help="run only these mutants (readable ids or keys)")
    ap.add_argument("--tests", nargs="*", default=None,
                    help="test files to map and run against each mutant instead of the default pool")
    ap.add_argument("--coverage-map", type=Path, default=None,
                    help="reuse the line-to-tests map saved here if recorded on this exact tree, else record and save")
    ap.add_argument("--no-map", action="store_true", help="run whole test files per mutant, without the coverage map")
    ap.add_argument("--survivors", type=Path, default=None, help="write survivors here as found")
    ap.add_argument("--no-fork", action="store_true", help="start a fresh pytest process for every mutant")
    args = ap.parse_args(argv)
    files = sorted(p for t in TARGETS for p in (ROOT / t).rglob("*.py") if p.name != "__init__.py")
    if args.list:
        print(len(mutants(files, only=set())))
        return 0
    if args.keys:
        every = mutants(files, only=set())
        picked = [m for m in every if m.id in set(args.ids) or m.key in set(args.ids)] if args.ids else \
            stable_sample(every, args.seed, args.sample)[:args.limit]
        for m in picked:
            print(f"{m.id}\n    {m.key}")
        return 0
    rate = run(args.sample, args.seed, args.json, args.ids, args.limit, args.tests, args.coverage_map,
               not args.no_map, args.survivors, not args.no_fork)
    return 0 if rate >= args.floor else 1


if __name__ == "__main__":
    raise SystemExit(main())
