"""The mutation runner itself (tests/tools/mutate.py): keys that survive unrelated edits, a coverage map that picks
the tests which run a line, and a saved map that is refused once the code changes."""

from __future__ import annotations

from pathlib import Path

import pytest
from tools import mutate

MODULE = '''"""A tiny module for the runner's own tests."""

SCALE = 3


def double(x):
    return x * 2


def clamp(x, lo=0, hi=10):
    if x < lo:
        return lo
    return min(x, hi) + 0 * SCALE
'''

TESTS = {
    "tests/test_double.py": "from pkg.mod import double\n\n\ndef test_double():\n    assert double(2) == 4\n",
    "tests/test_clamp.py": (
        "import pytest\n\nfrom pkg.mod import clamp\n\n\n@pytest.fixture(scope='module')\ndef low():\n"
        "    return clamp(-5)\n\n\ndef test_first(low):\n    assert low == 0\n\n\n"
        "def test_second_uses_the_shared_fixture(low):\n    assert low + 1 == 1\n\n\n"
        "@pytest.mark.parametrize('x', [3, 12])\ndef test_clamp_top(x):\n    assert clamp(x) == min(x, 10)\n"
    ),
}


def _package(root: Path, module: str = MODULE) -> Path:
    (root / "pkg").mkdir(parents=True, exist_ok=True)
    (root / "pkg" / "__init__.py").write_text("", encoding="utf-8")
    path = root / "pkg" / "mod.py"
    path.write_text(module, encoding="utf-8")
    return path


def _by_key(path: Path, root: Path) -> dict[str, mutate.Mutant]:
    return {m.key: m for m in mutate.mutants([path], root=root)}


def test_keys_survive_an_edit_above_the_function(tmp_path: Path) -> None:
    before = _by_key(_package(tmp_path / "a"), tmp_path / "a")
    edited = MODULE.replace("SCALE = 3\n", "SCALE = 3\nOFFSET = 1.5  # a new constant\n\n\ndef unused(y):\n"
                                           "    return y - OFFSET\n")
    after = _by_key(_package(tmp_path / "b", edited), tmp_path / "b")
    clamp_before = {k: m for k, m in before.items() if m.function == "clamp"}
    clamp_after = {k: m for k, m in after.items() if m.function == "clamp"}
    assert clamp_before and clamp_before.keys() == clamp_after.keys()
    # the readable ids moved with the lines; the keys did not
    assert all(clamp_before[k].id != clamp_after[k].id for k in clamp_before)
    # a seeded sample keeps every old mutant it still can: only the new function's mutants may displace some
    for size in (2, 4, 6):
        old = {m.key for m in mutate.stable_sample(list(before.values()), 7, size)}
        new = {m.key for m in mutate.stable_sample(list(after.values()), 7, size)}
        assert all(k in old for k in new if k in before)
        assert len(old - new) == len([k for k in new if k not in before])


def test_a_comment_edit_keeps_the_key_and_repeats_are_numbered(tmp_path: Path) -> None:
    src = "def f(a, b):\n    x = a + b + 1\n    y = a + b + 1\n    return x - y\n"
    keys = [m.key for m in mutate.mutants([_package(tmp_path / "a", src)], root=tmp_path / "a")]
    commented = src.replace("    y = a + b + 1\n", "    y = a + b + 1  # again\n")
    assert keys == [m.key for m in mutate.mutants([_package(tmp_path / "b", commented)], root=tmp_path / "b")]
    assert len(set(keys)) == len(keys)
    assert any(" | Add->Sub | 1 | y = a + b + 1" in k for k in keys)


def test_equivalents_accept_keys_and_older_ids(tmp_path: Path) -> None:
    m = next(m for m in mutate.mutants([_package(tmp_path)], root=tmp_path) if m.function == "double")
    listing = tmp_path / "eq.txt"
    listing.write_text(f"# comment\n{m.key} || why it cannot matter\nold/file.py:3:4:Lt->LtE | older reason\n",
                       encoding="utf-8")
    same = mutate.equivalents(listing)
    assert mutate.equivalent_reason(m, same) == "why it cannot matter"
    assert same["old/file.py:3:4:Lt->LtE"] == "older reason"


@pytest.fixture(scope="module")
def mapped(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    root = tmp_path_factory.mktemp("mapped")
    _package(root)
    (root / "tests").mkdir()
    (root / "pytest.ini").write_text("[pytest]\nmarkers =\n    slow: long\n", encoding="utf-8")
    for name, text in TESTS.items():
        (root / name).write_text(text, encoding="utf-8")
    pool = sorted(TESTS)
    tree = mutate.tree_hash(root, ("pkg", "tests"))
    return root, mutate._with_imports(mutate.record_map(root, pool, ("pkg",), tree), root, ("pkg",))


def _selected(root: Path, cmap: dict, function: str, change: str) -> list[str]:
    (m,) = [m for m in mutate.mutants([root / "pkg" / "mod.py"], root=root)
            if m.function == function and m.key.split(" | ")[2] == change]
    fast, reference = mutate.order_tests(m, cmap, mutate.covering_tests(m, cmap), ["tests/test_clamp.py"])
    assert reference == []
    return fast


def test_the_coverage_map_selects_the_tests_that_run_the_line(mapped: tuple[Path, dict]) -> None:
    root, cmap = mapped
    assert _selected(root, cmap, "double", "Mult->Div") == ["tests/test_double.py::test_double"]
    # x < lo runs in the shared fixture (credited to both its users) and in both parametrised cases
    assert sorted(_selected(root, cmap, "clamp", "Lt->LtE")) == sorted([
        "tests/test_clamp.py::test_first", "tests/test_clamp.py::test_second_uses_the_shared_fixture",
        "tests/test_clamp.py::test_clamp_top[3]", "tests/test_clamp.py::test_clamp_top[12]"])
    # min(x, hi) runs only in the parametrised test: the fixture returned before it
    assert sorted(_selected(root, cmap, "clamp", "Add->Sub")) == [
        "tests/test_clamp.py::test_clamp_top[12]", "tests/test_clamp.py::test_clamp_top[3]"]
    # a default runs at definition: the tests that call the function; a module constant: every test of the module
    assert len(_selected(root, cmap, "clamp", "const 10->11")) == 4
    assert len(_selected(root, cmap, "<module>", "const 3->4")) == 5


def test_a_stale_map_is_refused(mapped: tuple[Path, dict], tmp_path: Path) -> None:
    root, cmap = mapped
    saved = tmp_path / "map.json"
    saved.write_text(mutate.json.dumps({k: v for k, v in cmap.items() if k != "_imports"}), encoding="utf-8")
    pool = sorted(TESTS)
    tree = mutate.tree_hash(root, ("pkg", "tests"))
    assert mutate.load_map(saved, tree, pool)[0] is not None
    clamp_only = mutate.tree_hash(root, ("pkg", "tests"), ["tests/test_clamp.py"])
    (root / "tests" / "test_double.py").write_text(TESTS["tests/test_double.py"] + "\n# edited\n", encoding="utf-8")
    try:
        changed = mutate.tree_hash(root, ("pkg", "tests"))
        assert changed != tree
        cmap_again, why = mutate.load_map(saved, changed, pool)
        assert cmap_again is None and "another source tree" in why
        assert mutate.load_map(saved, tree, pool[:1])[0] is None
        # a test module outside the pool does not make the map stale
        assert mutate.tree_hash(root, ("pkg", "tests"), ["tests/test_clamp.py"]) == clamp_only
        (root / "tests" / "test_other.py").write_text("def test_other():\n    pass\n", encoding="utf-8")
        assert mutate.tree_hash(root, ("pkg", "tests"), pool) == changed
        (root / "tests" / "test_other.py").unlink()
    finally:
        (root / "tests" / "test_double.py").write_text(TESTS["tests/test_double.py"], encoding="utf-8")


def test_a_planted_mutant_is_run_through_the_fork_server(mapped: tuple[Path, dict]) -> None:
    root, cmap = mapped
    by = {(m.function, m.key.split(" | ")[2]): m for m in mutate.mutants([root / "pkg" / "mod.py"], root=root,
                                                                          only=None)}
    server = mutate.ForkServer(root)
    try:
        # x * 2 -> x / 2 breaks test_double; x < lo -> x <= lo changes nothing any test looks at (no x == 0 case)
        killed = mutate._run_one(by[("double", "Mult->Div")], root, cmap, None, server)
        kept = mutate._run_one(by[("clamp", "Lt->LtE")], root, cmap, None, server)
    finally:
        server.close()
    assert (killed["killed"], killed["tests"]) == (True, 1)
    assert (kept["killed"], kept["tests"]) == (False, 4)
    assert (root / "pkg" / "mod.py").read_text(encoding="utf-8") == MODULE
