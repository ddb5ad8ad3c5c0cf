"""Our own generators of hostile inputs for every file kind afecheck reads, and a runner that checks the outcome.

Kinds: design, intent, part library, config, rule set, waiver file, baseline, and command-line arguments. Each
case starts from a valid seed and applies random edits (structural: a value, key or section replaced by a
hostile one; textual: tokens spliced in, lines repeated or cut). :func:`run_cli_case` runs ``afecheck check``
in-process and asserts: no exception, exit status 0/1/2, no internal-error finding, no NaN/inf in a finding's
numbers or message (JSON report), under 10 s (:class:`Clock`). :func:`run_library_case` feeds one file to its
library reader.
"""

from __future__ import annotations

import contextlib
import copy
import functools
import io
import json
import random
import re
import time
import traceback
from pathlib import Path
from typing import Any

import yaml

ROOT = Path(__file__).resolve().parents[2]
DESIGN_SEEDS = tuple(p.read_text(encoding="utf-8") for p in sorted((ROOT / "sample_designs").glob("*.yaml"))
                     if not p.name.endswith(".intent.yaml"))
INTENT_SEED = (ROOT / "sample_designs" / "vibration_follower.intent.yaml").read_text(encoding="utf-8")
LIBRARY_SEED = ("afecheck-parts: 1\nparts:\n  FZ-OPA: {gbw: 1 MHz, open_loop_gain: 100 dB, slew_rate: 0.5 V/us,"
                " output_resistance: 100, input_cm_low: -0.1 V, input_cm_high: 3 V}\n")
CONFIG_SEED = ("afecheck-config: 1\nruleset: precision\nfail-on: warning\nwaivers: [w.yaml]\npromote: {info: warning}\n"
               "rules:\n  AFE201: {params: {warn_deg: 50 deg, error_deg: 40}}\n  AFE406: off\n  AFE102: warning\n")
RULESET_SEED = ("afecheck-ruleset: 1\nextends: default\ndescription: fuzz set\nfail-on: error\n"
                "rules: {AFE101: warning}\n")
WAIVER_SEED = ("afecheck-waivers: 1\nwaivers:\n  - fingerprint: 0123456789abcdef\n    rule: AFE101\n"
               "    justification: bench measured\n    accepted-by: J. Reviewer\n    expires: 2027-06-30\n")
BASELINE_SEED = json.dumps({"afecheck_baseline": 1, "designs": [{"name": "n", "file": "design.yaml"}], "findings": [
    {"rule": "AFE101", "slug": "s", "severity": "error", "message": "m", "fix": "f", "design": "n",
     "file": "design.yaml", "line": 3, "path": "components.R1", "refs": ["R1"], "nets": ["IN"], "pins": [],
     "ctx": {"value": 1.0}}]}, indent=1)

HOSTILE: tuple[Any, ...] = (
    None, True, 0, -1, 2**70, 1e308, -1e-300, "nan", "inf", "-inf", ".nan", "1e400", "1" + "0" * 320, "9" * 5000,
    "", " ", "abc", "10 kΩ", "0 V", "-5 V", "1e6 V", "80 dB", "-300 °C", "💥", "\x1b[2J", "\u202e", "a|b<c>&d]]>",
    "/etc/passwd", "../../x.yaml", "/dev/zero", "x\x00y", "a" * 300, "2027-02-30", "99999-01-01", "0123e45678901234",
    [], [1, 2], {}, {"x": 1}, {"<<": 1}, "never", "error", "off", "precision", "default",
)
SPLICES = ("{", "}", "[", ":", "- ", "\t", "'", '"', "&a ", "*a", "!!python/object/apply:os.system ['true']",
           "!!timestamp ", "<<: *a\n", "\n  ", "\x00", "\x1b", "1e400", ".inf", "fail-on: never\n", "? [a]\n: b\n")
OPTIONS = ("--intent", "--parts", "--config", "--ruleset", "--waivers", "--baseline", "--fail-on", "--format",
           "--output", "--today", "--color", "--no-config", "--only-designs", "--baseline-any-design", "--bogus")
_TOKEN = re.compile(r"(?<![\w.])[-+]?(?:nan|inf|infinity)(?![\w])", re.IGNORECASE)


def _pick(rng: random.Random, data: Any) -> tuple[Any, Any] | None:
    """A random (container, key) inside ``data``."""
    spots: list[tuple[Any, Any]] = []
    stack = [data]
    while stack and len(spots) < 400:
        node = stack.pop()
        items = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
        for k, v in items:
            spots.append((node, k))
            stack.append(v)
    return rng.choice(spots) if spots else None


_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)  # libyaml where PyYAML has it: the generator's own
DUMPER = getattr(yaml, "CSafeDumper", yaml.SafeDumper)  # parsing, not afecheck's, was most of a case's time
_UNPARSED = object()


@functools.lru_cache(maxsize=32)
def _parsed(text: str, as_json: bool) -> Any:
    """``text`` as data (None when it does not parse); cached, since every case starts from one of a few seeds."""
    try:
        return json.loads(text) if as_json else yaml.load(text, Loader=_LOADER)  # noqa: S506 - a safe loader
    except Exception:  # noqa: BLE001 - damaged text stays text
        return None


def mutate_text(rng: random.Random, text: str, as_json: bool = False) -> str:
    """One to four random edits of ``text``, structural (parse, change, re-dump) or textual."""
    data: Any = _UNPARSED  # the data ``text`` was dumped from, kept across structural edits
    for _ in range(rng.randint(1, 4)):
        if rng.random() < 0.6:
            if data is _UNPARSED:
                data = copy.deepcopy(_parsed(text, as_json))
            spot = _pick(rng, data) if isinstance(data, (dict, list)) else None
            if spot is not None:
                node, key = spot
                op = rng.random()
                if op < 0.7:
                    node[key] = copy.deepcopy(rng.choice(HOSTILE))  # later edits must not change HOSTILE
                elif op < 0.85 and isinstance(node, dict):
                    node[str(rng.choice(HOSTILE))] = node.pop(key)
                elif isinstance(node, dict):
                    del node[key]
                try:
                    text = (json.dumps(data, allow_nan=True) if as_json or rng.random() < 0.3
                            else yaml.dump(data, Dumper=DUMPER, allow_unicode=True, sort_keys=False))
                except (TypeError, ValueError, OverflowError):
                    data = _UNPARSED  # not written out: the next edit starts again from the text
                continue
        data = _UNPARSED
        pos = rng.randint(0, len(text))
        op = rng.random()
        lines = text.splitlines(keepends=True)
        if op < 0.4:
            text = text[:pos] + rng.choice(SPLICES) + text[pos:]
        elif op < 0.6 and lines:
            i = rng.randrange(len(lines))
            lines.insert(i, lines[i])
            text = "".join(lines)
        elif op < 0.75:
            text = text[:pos]
        else:
            text = text[:pos] + str(rng.choice(HOSTILE)) + text[pos:]
    return text


KINDS = ("design", "intent", "library", "config", "ruleset", "waivers", "baseline", "cli")


def make_case(rng: random.Random) -> tuple[str, dict[str, str], list[str]]:
    """(kind, files by name, extra argv) for one case; the design is ``design.yaml`` beside the others."""
    kind = rng.choice(KINDS)
    design = rng.choice(DESIGN_SEEDS)
    design = re.sub(r"^intent:.*$", "", design, flags=re.M)
    files = {"design.yaml": design, "w.yaml": WAIVER_SEED}
    argv: list[str] = ["--no-config"]
    if kind == "design":
        files["design.yaml"] = mutate_text(rng, design)
    elif kind == "intent":
        files["i.yaml"] = mutate_text(rng, INTENT_SEED)
        argv = ["--no-config", "--intent", "i.yaml"]
    elif kind == "library":
        files["lib.yaml"] = mutate_text(rng, LIBRARY_SEED)
        argv = ["--no-config", "--parts", "lib.yaml"]
    elif kind == "config":
        files[".afecheck.yaml"] = mutate_text(rng, CONFIG_SEED)
        files["precision.yaml"] = RULESET_SEED
        argv = []
    elif kind == "ruleset":
        files["set.yaml"] = mutate_text(rng, RULESET_SEED)
        files[".afecheck.yaml"] = "afecheck-config: 1\nruleset: set.yaml\n"
        argv = []
    elif kind == "waivers":
        files["w.yaml"] = mutate_text(rng, WAIVER_SEED)
        argv = ["--no-config", "--waivers", "w.yaml", "--today", "2027-01-01"]
    elif kind == "baseline":
        files["b.json"] = mutate_text(rng, BASELINE_SEED, as_json=True)
        argv = ["--no-config", "--baseline", "b.json"] + (["--baseline-any-design"] if rng.random() < 0.3 else [])
    else:
        argv = []
        for _ in range(rng.randint(1, 5)):
            argv.append(rng.choice(OPTIONS))
            if rng.random() < 0.8:
                argv.append(str(rng.choice(HOSTILE + ("w.yaml", "design.yaml", "json", "sarif", "junit", "out.txt"))))
    return kind, files, argv


class Clock:
    """Times one case: its processor time must stay under 10 s (the issue's limit for any input), its wall time
    under 60 s (a run that waits, on a FIFO say, uses no processor). Processor time, because on a loaded shared
    machine the wall clock measures the other jobs as much as afecheck."""

    def __init__(self) -> None:
        self.cpu, self.wall = time.process_time(), time.perf_counter()

    def check(self, case: str) -> float:
        """The case's processor seconds; AssertionError naming ``case`` when a limit is passed."""
        cpu, wall = time.process_time() - self.cpu, time.perf_counter() - self.wall
        assert cpu < 10 and wall < 60, f"took {cpu:.1f} s of processor time, {wall:.1f} s wall: {case}"
        return cpu


def report_problems(out: str, fmt: str) -> list[str]:
    """What is wrong in a report: internal-error findings; in JSON also non-finite numbers, nan/inf printed."""
    from afecheck.engine.registry import CRASH_META
    from afecheck.policy.finite import quoted_names

    if fmt != "json" or not out.lstrip().startswith("{"):
        return [f"internal error finding in: {out[:2000]}"] if CRASH_META.id in out else []
    bad = []
    for f in json.loads(out).get("findings", []):
        if f["rule"] == CRASH_META.id:
            bad.append(f"internal error finding: {f['message']}")
        text = json.dumps(f["ctx"])
        message = f"{f['message']} {f['fix']} {text}"
        names = {*f["refs"], *f["nets"], *f["pins"], f["design"], *quoted_names(f["ctx"])}
        for name in sorted(names, key=len, reverse=True):
            if name:
                message = message.replace(name, " ").replace(json.dumps(name)[1:-1], " ")
        if _TOKEN.search(message) or "NaN" in text or "Infinity" in text:
            bad.append(f"non-finite value in {f['rule']}: {f['message']}")
    return bad


def run_main(args: list[str], case: str, fmt: str = "text") -> tuple[int, str, str, float]:
    """``afecheck ARGS`` in-process, its report in ``fmt``: (exit status, stdout, stderr, processor seconds).

    AssertionError showing ``case`` on an escaped exception, an exit status outside 0/1/2, a traceback, a run over
    the :class:`Clock` limits, or a report with an internal-error finding or a non-finite number.
    """
    from afecheck.cli import main

    out, err = io.StringIO(), io.StringIO()
    clock = Clock()
    try:
        rc = main(args, out, err)
    except BaseException as exc:  # noqa: BLE001 - any escape is the defect under test
        raise AssertionError(f"afecheck raised {type(exc).__name__} on {args}\n{case}\n"
                             + "".join(traceback.format_exception(exc))) from None
    where = f"argv {args}\n{case}\nstderr {err.getvalue()[:2000]}"
    took = clock.check(where)
    assert rc in (0, 1, 2), f"exit status {rc}: {where}"
    assert "Traceback" not in err.getvalue(), where
    if rc in (0, 1):
        bad = report_problems(out.getvalue(), fmt)
        assert not bad, f"{bad}: {where}"
    return rc, out.getvalue(), err.getvalue(), took


def run_cli_case(folder: Path, files: dict[str, str], argv: list[str], fmt: str = "json") -> tuple[int, float]:
    """Write ``files`` into ``folder`` and run ``afecheck check`` (:func:`run_main`): (exit status, processor s)."""
    for old in folder.iterdir():
        if old.is_file() and old.name != ".git":
            old.unlink()
    for name, text in files.items():
        (folder / name).write_text(text, encoding="utf-8", errors="surrogatepass")
    args = ["check", *[str(folder / a) if a in files else a for a in argv], "--format", fmt,
            str(folder / "design.yaml")]
    for i, arg in enumerate(args[:-1]):  # a case's output stays in ``folder``: never over a real file such as
        if args[i - 1] == "--output" and arg.startswith("/") and not arg.startswith(("/dev/", str(folder))):
            args[i] = str(folder) + arg  # /etc/passwd (the run is often root); devices are written in place
    here = folder / "cwd" / "sub"  # relative outputs, ../../x.yaml included, land inside ``folder`` too
    here.mkdir(parents=True, exist_ok=True)
    with contextlib.chdir(here):
        rc, _, _, took = run_main(args, f"files {files!r}", fmt)
    return rc, took


@functools.cache
def _catalogue(catalogue_type: Any, registry: Any) -> Any:
    return catalogue_type(registry().metas())


def run_library_case(folder: Path, kind: str, text: str) -> float:
    """Feed one file to its library reader: an InputError (with a file name) or a value, never anything else.

    Returns the processor seconds it took (:class:`Clock` limits)."""
    from afecheck.engine.registry import default_registry
    from afecheck.errors import InputError
    from afecheck.model.load import load_design
    from afecheck.parts.library import read_library
    from afecheck.policy.baseline import read_baseline
    from afecheck.policy.config import resolve_policy
    from afecheck.policy.rulesets import Catalogue, load_ruleset
    from afecheck.policy.waivers import load_waivers

    name = {"baseline": "b.json", "config": ".afecheck.yaml"}.get(kind, f"{kind}.yaml")
    path = folder / name
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    catalogue = _catalogue(Catalogue, default_registry)
    readers = {
        "design": lambda: load_design(path), "intent": lambda: load_design(folder / "design.yaml", intent=path),
        "library": lambda: read_library(path), "config": lambda: resolve_policy(catalogue, path),
        "ruleset": lambda: load_ruleset(name, catalogue, folder), "waivers": lambda: load_waivers(path, catalogue),
        "baseline": lambda: read_baseline(path),
    }
    clock = Clock()
    try:
        readers[kind]()
    except InputError as exc:
        assert exc.problems and all(p.file for p in exc.problems), exc
    except BaseException as exc:  # noqa: BLE001
        raise AssertionError(f"{kind} reader raised {type(exc).__name__} on {text!r}\n"
                             + "".join(traceback.format_exception(exc))) from None
    return clock.check(f"{kind} reader on {text!r}")
