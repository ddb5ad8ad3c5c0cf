"""Docs are run, not just read: every ``afecheck`` command and option that README, DEVELOPERS and docs/ show exists,
and every output shown under a ``<!-- output of: ... -->`` marker is what that command prints today."""

from __future__ import annotations

import io
import re
import shlex
from pathlib import Path

import pytest

from afecheck.cli import COMMANDS, main

ROOT = Path(__file__).resolve().parent.parent
DOCS = sorted([ROOT / "README.md", ROOT / "DEVELOPERS.md", *(ROOT / "docs").glob("*.md")])
INLINE = re.compile(r"`(afecheck [^`]+)`")
FENCE = re.compile(r"^```[a-z]*\n(.*?)^```", re.S | re.M)
MARKED = re.compile(r"<!-- output of: (.+?) -->\s*\n```[a-z]*\n(.*?)^```", re.S | re.M)


def _mentions() -> list[tuple[str, str]]:
    """(doc, command line) for every afecheck invocation shown inline or in a fenced block."""
    out: list[tuple[str, str]] = []
    for doc in DOCS:
        text = doc.read_text(encoding="utf-8")
        out += [(doc.name, m) for m in INLINE.findall(text)]
        for block in FENCE.findall(text):
            for line in block.splitlines():
                found = re.search(r"(?:^|&&\s*|\$\s*)(afecheck\s.*?)(?:\s+#.*)?$", line.strip())
                if found and not line.strip().startswith(("#", "-", "id:", "entry:")):
                    out.append((doc.name, found.group(1)))
    return out


MENTIONS = _mentions()


def test_docs_show_commands_at_all() -> None:
    assert len(MENTIONS) > 15 and {c.split()[1] for _, c in MENTIONS} >= {"check", "stages", "spice", "rules"}


@pytest.mark.parametrize(("doc", "line"), MENTIONS, ids=[f"{d}:{c}" for d, c in MENTIONS])
def test_every_documented_command_and_option_exists(doc: str, line: str, capsys: pytest.CaptureFixture) -> None:
    words = line.split()
    command = words[1]
    if command.startswith("-"):  # an option of afecheck itself
        assert main(["--help"]) == 0
        assert re.search(rf"(?<![\w-]){re.escape(command)}(?![\w-])", capsys.readouterr().out), line
        return
    assert command in COMMANDS, f"{doc} shows `afecheck {command}`, which is not a command"
    assert main([command, "--help"]) == 0  # argparse prints help to sys.stdout
    help_text = capsys.readouterr().out
    for option in (w.strip("[]|,.") for w in words[2:] if w.startswith(("--", "[--"))):
        option = option.split("=")[0]
        pattern = rf"(?<![\w-]){re.escape(option)}(?![\w-])"
        assert re.search(pattern, help_text), f"{doc} shows `{option}` for `afecheck {command}`; its --help lacks it"


def test_marked_outputs_are_what_the_commands_print(monkeypatch: pytest.MonkeyPatch) -> None:
    """Each marked block must appear, line for line and in order, in the output of its command run from the root."""
    monkeypatch.chdir(ROOT)
    monkeypatch.setenv("NO_COLOR", "1")
    checked = 0
    for doc in DOCS:
        for command, block in MARKED.findall(doc.read_text(encoding="utf-8")):
            out = io.StringIO()
            main(shlex.split(command)[1:], stdout=out, stderr=io.StringIO())
            printed = out.getvalue().splitlines()
            wanted = block.rstrip("\n").splitlines()
            starts = [i for i, ln in enumerate(printed) if ln == wanted[0]]
            assert any(printed[i:i + len(wanted)] == wanted for i in starts), (
                f"{doc.name}: the block under `{command}` no longer matches its output:\n" + "\n".join(printed))
            checked += 1
    assert checked >= 1


def test_readme_rule_table_lists_every_registered_rule() -> None:
    from afecheck.engine.registry import default_registry

    text = (ROOT / "README.md").read_text(encoding="utf-8")
    table = text[text.index("| family | rules |"):].split("\n\n", 1)[0]
    listed = set(re.findall(r"`([a-z-]+\.[a-z0-9-]+)`", table))
    assert listed == {m.id for m in default_registry().metas()}
