"""pytest plugin for tests/tools/mutate.py: record which test runs which line, or run a chosen list of tests in order.

Loaded with ``-p mutate_plugin`` (tests/tools on PYTHONPATH). Two modes, set by environment variables:

- ``AFECHECK_MUTANT_RECORD=<dir>``: measure the target packages with coverage.py, one dynamic context per test
  (its pytest node id) and one per shared fixture (a fixture wider than one test is set up inside whichever test
  asks first, so its lines are credited to every test that uses it); writes ``coverage.db`` and ``tests.json``
  (node ids in run order, seconds each, shared fixtures each uses) into the directory.
- ``AFECHECK_MUTANT_TESTS=<file>``: keep only the node ids listed in the file (one a line) and run them in that order.

In both, hypothesis runs derandomised with no deadline, so a property test sees the same examples every time.
"""

from __future__ import annotations

import json
import os
import time
from pathlib import Path

import pytest

_cov = None
_stack: list[str] = []
_tests: dict[str, dict] = {}
_failed: set[str] = set()


def fixture_context(fixturedef: pytest.FixtureDef) -> str:
    """The coverage context of a fixture shared by several tests: its scope, where it is defined and its name."""
    return f"fixture|{fixturedef.scope}|{fixturedef.baseid}|{fixturedef.argname}"


def _switch(context: str) -> None:
    if _cov is not None:
        _cov.switch_context(context)


def pytest_configure(config: pytest.Config) -> None:
    """Make property-based tests repeatable (same examples in the coverage pass and under every mutant, no time
    limit that a loaded machine or the tracer could break); then start measuring before the tests import the
    package, so import-time lines are seen (context '')."""
    global _cov
    record = os.environ.get("AFECHECK_MUTANT_RECORD")
    try:
        from hypothesis import settings
    except ImportError:
        pass
    else:
        settings.register_profile("afecheck-mutants", deadline=None, derandomize=True, database=None)
        settings.load_profile("afecheck-mutants")
    if record:
        import coverage

        sources = os.environ.get("AFECHECK_MUTANT_SOURCES", "afecheck").split(os.pathsep)
        _cov = coverage.Coverage(data_file=str(Path(record) / "coverage.db"), source=sources, branch=False,
                                 config_file=False)
        _cov.start()


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    """With a chosen list, drop every other test and put the rest in the list's order."""
    chosen = os.environ.get("AFECHECK_MUTANT_TESTS")
    if not chosen:
        return
    order = {nid: k for k, nid in enumerate(Path(chosen).read_text(encoding="utf-8").splitlines()) if nid}
    kept = sorted((i for i in items if i.nodeid in order), key=lambda i: order[i.nodeid])
    dropped = [i for i in items if i.nodeid not in order]
    if dropped:
        config.hook.pytest_deselected(items=dropped)
    items[:] = kept


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_protocol(item: pytest.Item, nextitem: pytest.Item | None):
    """Credit the lines a test runs to its node id; note its time and the shared fixtures it uses."""
    if _cov is None:
        yield
        return
    shared = []
    for defs in getattr(getattr(item, "_fixtureinfo", None), "name2fixturedefs", {}).values():
        if defs and defs[-1].scope != "function":
            shared.append(fixture_context(defs[-1]))
    _stack[:] = [item.nodeid]
    _switch(item.nodeid)
    t0 = time.perf_counter()
    yield
    _tests[item.nodeid] = {"seconds": round(time.perf_counter() - t0, 4), "shared": sorted(shared),
                           "failed": item.nodeid in _failed}
    _stack.clear()
    _switch("")


def pytest_runtest_logreport(report: pytest.TestReport) -> None:
    """Note tests that fail on the unmutated tree: the runner leaves them out."""
    if _cov is not None and report.failed:
        _failed.add(report.nodeid)


@pytest.hookimpl(hookwrapper=True)
def pytest_fixture_setup(fixturedef: pytest.FixtureDef, request: pytest.FixtureRequest):
    """A fixture wider than one test runs under its own context, so the lines belong to all its users."""
    if _cov is None or fixturedef.scope == "function":
        yield
        return
    ctx = fixture_context(fixturedef)
    _stack.append(ctx)
    _switch(ctx)
    try:
        yield
    finally:
        _stack.pop()
        _switch(_stack[-1] if _stack else "")


def pytest_unconfigure(config: pytest.Config) -> None:
    """Save the measurement and the test list."""
    if _cov is None:
        return
    _cov.stop()
    _cov.save()
    out = Path(os.environ["AFECHECK_MUTANT_RECORD"]) / "tests.json"
    out.write_text(json.dumps(_tests, indent=0), encoding="utf-8")
