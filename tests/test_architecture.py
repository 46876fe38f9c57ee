"""Guards of the architecture (DESIGN.md, "Architecture: one direction of flow").

Data moves forward only: a package imports only from packages before it in the
flow; the numerical solution in ``simulate/`` reads only the circuit model, never
the exact path (``solve/``) or the judgement (``verify/``), so that its evidence
stays independent.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "handcheck"

#: The flow, earliest first; a module may import from its own rank or an earlier one.
RANK = {
    "errors": 0,
    "budget": 0,
    "worksheet": 1,
    "circuit": 2,
    "solve": 3,
    "simulate": 3,
    "verify": 4,
    "audit": 5,
    "record": 6,
    "pipeline": 7,
    "batch": 8,
    "cli": 9,
    "testing": 9,
    "testing_items": 9,
    "__init__": 10,
}

#: Tables of plain data that import nothing of handcheck: any stage may read them
#: (the part kinds are named by the worksheet reader and used by every later stage).
LEAVES = {"circuit.kinds"}

#: Packages of the same rank that must not see each other (independent evidence).
APART = {("simulate", "solve"), ("solve", "simulate"), ("simulate", "verify")}


def _imports(path: Path) -> list[tuple[str, int, str]]:
    """(imported handcheck package, line, imported names) for every import in ``path``.

    An import of one of the :data:`LEAVES` is left out.
    """
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module and node.module.split(".")[0] == "handcheck":
            parts = node.module.split(".")
            if ".".join(parts[1:3]) in LEAVES:
                continue
            names = ",".join(alias.name for alias in node.names)
            found.append((parts[1] if len(parts) > 1 else "__init__", node.lineno, names))
        elif isinstance(node, ast.Import):
            for alias in node.names:
                parts = alias.name.split(".")
                if parts[0] == "handcheck" and len(parts) > 1:
                    found.append((parts[1], node.lineno, alias.name))
    return found


MODULES = sorted(PACKAGE.rglob("*.py"))


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_run_forward(path):
    here = path.relative_to(PACKAGE).parts[0].removesuffix(".py")
    assert here in RANK, f"{here} has no place in the flow: add it to RANK"
    for target, line, names in _imports(path):
        if target == here:
            continue
        if target == "__init__" and names == "__version__":
            continue  # the version string, from package metadata
        assert target in RANK, f"{path.name}:{line} imports handcheck.{target}, which has no place in the flow"
        assert RANK[target] <= RANK[here], f"{path.relative_to(PACKAGE)}:{line} imports {target}, later in the flow"
        assert (here, target) not in APART, f"{path.relative_to(PACKAGE)}:{line}: {here} must not import {target}"


def test_the_guard_sees_a_backward_import(tmp_path):
    # The guard itself can fail: a solver importing the judgement is caught.
    bad = tmp_path / "bad.py"
    bad.write_text("from handcheck.verify.check import check\n", encoding="utf-8")
    assert _imports(bad) == [("verify", 1, "check")]
    assert RANK["verify"] > RANK["solve"]


@pytest.mark.parametrize("leaf", sorted(LEAVES))
def test_leaves_import_nothing_of_handcheck(leaf):
    path = PACKAGE / (leaf.replace(".", "/") + ".py")
    imports = [n for n in ast.walk(ast.parse(path.read_text(encoding="utf-8"))) if isinstance(n, ast.ImportFrom)]
    assert not [n.module for n in imports if n.module and n.module.startswith("handcheck")]


#: Longest module, in lines: a file that grows past it is doing more than one job
#: (the project's rule, docs/develop.md; common practice).
MAX_MODULE_LINES = 600


def test_no_module_grows_past_the_limit():
    long = {
        str(path.relative_to(PACKAGE)): n
        for path in PACKAGE.rglob("*.py")
        if (n := len(path.read_text(encoding="utf-8").splitlines())) > MAX_MODULE_LINES
    }
    assert long == {}, f"split these modules by job: {long}"
