"""Fork server for tests/tools/mutate.py: import pytest and the heavy libraries once, then fork a child per mutant.

A pytest process spends about two seconds of CPU importing pytest, hypothesis, numpy, pydantic and networkx before
it runs a test; with one process per mutant that start-up was most of a killed mutant's cost. This server (run
with the copy as its working directory) imports those once and never imports afecheck, so each forked child
imports the package fresh, mutated module included. It reads one JSON request a line on stdin
(``{"args": [...], "env": {...}, "timeout": s, "log": path}``) and answers one JSON line:
``{"code": exit status}`` or ``{"code": null}`` when the child ran past its time and was killed.
"""

from __future__ import annotations

import json
import os
import signal
import sys
import time

PRELOAD = ("pytest", "_pytest.python", "_pytest.assertion.rewrite", "hypothesis", "numpy", "pydantic", "networkx",
           "yaml", "jinja2", "tqdm")


def _child(request: dict) -> None:
    """In the fork: own process group, output to the log, run pytest, exit without returning to the loop."""
    os.setpgid(0, 0)
    fd = os.open(request["log"], os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644)
    os.dup2(fd, 1)
    os.dup2(fd, 2)
    os.environ.update(request.get("env", {}))
    code = 4
    try:
        import pytest

        code = int(pytest.main(request["args"]))
    finally:
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(code)


def _wait(pid: int, timeout: float) -> int | None:
    end = time.monotonic() + timeout
    while True:
        done, status = os.waitpid(pid, os.WNOHANG)
        if done:
            return os.waitstatus_to_exitcode(status)
        if time.monotonic() > end:
            try:
                os.killpg(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            os.waitpid(pid, 0)
            return None
        time.sleep(0.02)


def main() -> None:
    sys.path[0] = os.getcwd()  # as `python -m pytest` in the copy: its afecheck comes first
    for name in PRELOAD:
        try:
            __import__(name)
        except ImportError:
            pass
    print(json.dumps({"ready": True}), flush=True)
    for line in sys.stdin:
        request = json.loads(line)
        pid = os.fork()
        if pid == 0:
            _child(request)
        print(json.dumps({"code": _wait(pid, float(request["timeout"]))}), flush=True)


if __name__ == "__main__":
    main()
