"""The house by stage: import contracts, the contributor guide's layout map, module size.

The contracts live in pyproject.toml ([tool.importlinter]); this file runs
`lint-imports` so that a wrong arrow fails the suite.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import grimp
import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "suitmap"
MAX_LINES = 520  # DEVELOPERS.md: "keep each module under ~500 lines"


def _modules() -> set[str]:
    return {p.relative_to(PACKAGE).as_posix() for p in PACKAGE.rglob("*.py")
            if "__pycache__" not in p.parts}


def test_import_contracts_hold():
    lint = Path(sys.executable).with_name("lint-imports")
    cmd = [str(lint)] if lint.exists() else [sys.executable, "-m", "importlinter.cli"]
    proc = subprocess.run([*cmd, "--config", str(ROOT / "pyproject.toml"), "--no-cache"],
                          cwd=ROOT, capture_output=True, text=True)
    assert proc.returncode == 0, proc.stdout[-4000:] + proc.stderr[-2000:]
    assert "0 broken" in proc.stdout
    # every contract the guide names is there and was checked
    for cid in ("Stages import downward only", "Kernels import nothing", "Writers know",
                "Config imports no xarray", "Nothing imports the package root",
                "No import circles"):
        assert cid in proc.stdout.replace("\n", " ")


def test_no_module_imports_the_package_root():
    graph = grimp.build_graph("suitmap", cache_dir=None)
    importers = graph.find_modules_that_directly_import("suitmap")
    assert importers == set(), f"modules importing the package root: {sorted(importers)}"


def _layout_map() -> set[str]:
    text = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    section = text[text.index("## Layout"):]
    block = section[section.index("```") + 3:]
    block = block[block.index("\n") + 1:block.index("```")]
    listed: set[str] = set()
    stack: list[tuple[int, str]] = []
    for line in block.splitlines():
        if not line.strip():
            continue
        indent = len(line) - len(line.lstrip(" "))
        first = line.split()[0]
        if not (first.endswith("/") or first.endswith(".py")):
            continue  # a continuation line of a description
        while stack and stack[-1][0] >= indent:
            stack.pop()
        prefix = "/".join(name for _, name in stack)
        if first.endswith("/"):
            stack.append((indent, first.rstrip("/")))
            # "writers/   cog.py · netcdf.py": modules named on the folder's own line
            for tok in re.findall(r"[\w./]+\.py\b", line):
                listed.add("/".join(n for _, n in stack) + "/" + tok)
        else:
            listed.add(f"{prefix}/{first}" if prefix else first)
    return {m[len("suitmap/"):] for m in listed if m.startswith("suitmap/")}


def test_layout_map_lists_exactly_the_modules():
    listed, present = _layout_map(), _modules()
    implicit = {p for p in present if p.endswith("__init__.py") and p.count("/") >= 1
                and p != "config/library/__init__.py"}
    missing = sorted(present - listed - implicit)
    stale = sorted(listed - present)
    assert not missing, f"modules not in DEVELOPERS.md's layout map: {missing}"
    assert not stale, f"DEVELOPERS.md lists modules that do not exist: {stale}"


def test_layout_map_parser_sees_nested_files():
    # the parser itself: a map that names a real nested module is read as that path
    listed = _layout_map()
    assert "kernels/tables/core.py" in listed and "writers/cog.py" in listed


@pytest.mark.parametrize("module", sorted(_modules()))
def test_module_size(module):
    n = len((PACKAGE / module).read_text(encoding="utf-8").splitlines())
    assert n <= MAX_LINES, f"suitmap/{module} has {n} lines; split it (DEVELOPERS.md)"
