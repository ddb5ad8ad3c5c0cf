"""Skips that cannot hide: under CI a test skipped for want of a declared external tool or file fails the run.

A CI run that lost ngspice (or the vendored SARIF schema, or a browser) would otherwise stay green while the
comparisons with the outside silently stopped. Locally these tests still skip, and ``-rs`` (pyproject addopts)
prints every skip reason.
"""

from __future__ import annotations

import os
import shutil

import pytest

# Declared externals: marker or skip-reason keyword -> what is missing and how to get it.
EXTERNALS = {
    "ngspice": "ngspice is not on PATH (Debian: apt-get install ngspice; .ci/run installs it)",
    "browser": "no web browser for the browser tests",
    "sarif": "the official SARIF 2.1.0 schema (vendored in tests/schemas)",
}


def in_ci() -> bool:
    """True when the environment variable CI is set to anything but empty, 0 or false."""
    return os.environ.get("CI", "").strip().lower() not in ("", "0", "false", "no")


def _external_of(item: pytest.Item, reason: str) -> str | None:
    """The declared external a skip stands for: the test's marker, else a keyword in the skip reason."""
    for name in EXTERNALS:
        if item.get_closest_marker(name) is not None:
            return name
    low = reason.lower()
    return next((name for name in EXTERNALS if name in low), None)


def _needs_ngspice(item: pytest.Item) -> bool:
    """Marked ``ngspice``, or carrying a skipif whose reason names ngspice."""
    if item.get_closest_marker("ngspice") is not None:
        return True
    return any("ngspice" in str(m.kwargs.get("reason", "")).lower() for m in item.iter_markers("skipif"))


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    """Under CI, stop before running anything when selected tests need ngspice and it is missing."""
    if not in_ci() or shutil.which("ngspice") is not None:
        return
    needing = [i.nodeid for i in items if _needs_ngspice(i)]
    if needing:
        pytest.exit(f"CI is set but {EXTERNALS['ngspice']}: {len(needing)} selected ngspice comparisons "
                    f"(first: {needing[0]}) would be skipped; install ngspice or unset CI", returncode=3)


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_makereport(item: pytest.Item, call: pytest.CallInfo):
    """Under CI, turn a skip caused by a missing declared external into a failure that says what is missing."""
    outcome = yield
    report = outcome.get_result()
    if not (report.skipped and in_ci()) or hasattr(report, "wasxfail"):
        return
    reason = report.longrepr[2] if isinstance(report.longrepr, tuple) else str(report.longrepr)
    name = _external_of(item, reason)
    if name is None:
        return
    report.outcome = "failed"
    report.longrepr = f"CI is set, so this skip is a failure: {EXTERNALS[name]} ({reason})"


def pytest_terminal_summary(terminalreporter, exitstatus: int, config: pytest.Config) -> None:
    """Print the figures long tests record (``record_property("figures", ...)``: fuzz case counts, slowest case).

    User properties travel back from pytest-xdist workers, so the figures show under ``-n 2`` as well.
    """
    lines = [f"{r.nodeid}: {value}" for r in terminalreporter.stats.get("passed", [])
             for key, value in r.user_properties if key == "figures"]
    if lines:
        terminalreporter.section("figures recorded by the tests")
        for line in lines:
            terminalreporter.write_line(line)
