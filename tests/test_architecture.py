"""Guards of the architecture (DESIGN.md, "Architecture: one direction of flow").

Data moves forward only: a package imports only from packages before it in the
flow; the numerical solution in ``simulate/`` reads only the circuit model, never
the exact path (``solve/``) or the judgement (``verify/``), so that its evidence
stays independent.
"""

from __future__ import annotations

import ast
import re
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


#: Longest function, in lines from its ``def`` to its last line, docstring included:
#: a longer one carries a ``# long: <reason>`` line of its own saying why it is one
#: job (issue 8; the project's rule, docs/develop.md; common practice).
MAX_FUNCTION_LINES = 80

#: The line that lets a function run past :data:`MAX_FUNCTION_LINES`.
LONG_REASON = re.compile(r"^\s*# long: \S")


def _unexplained_long_functions(source: str, limit: int = MAX_FUNCTION_LINES) -> list[tuple[str, int, int]]:
    """(name, first line, length) of every function longer than ``limit`` lines with no reason line.

    The reason must stand in the function's own lines and outside any function
    nested in it, so that a nested helper's reason does not excuse its parent.
    """
    lines = source.splitlines()
    found = []
    for node in ast.walk(ast.parse(source)):
        if not isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
            continue
        assert node.end_lineno is not None
        length = node.end_lineno - node.lineno + 1
        if length <= limit:
            continue
        nested = {
            n
            for inner in ast.walk(node)
            if inner is not node and isinstance(inner, ast.FunctionDef | ast.AsyncFunctionDef)
            for n in range(inner.lineno, (inner.end_lineno or inner.lineno) + 1)
        }
        own = (lines[n - 1] for n in range(node.lineno, node.end_lineno + 1) if n not in nested)
        if not any(LONG_REASON.match(line) for line in own):
            found.append((node.name, node.lineno, length))
    return found


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(PACKAGE)))
def test_long_functions_say_why(path):
    found = _unexplained_long_functions(path.read_text(encoding="utf-8"))
    assert found == [], (
        f"{path.relative_to(PACKAGE)}: split these functions by job, or add a '# long: <reason>' line "
        f"inside each (name, line, length): {found}"
    )


def _function(name: str, body_lines: int, reason: str | None = None, nested_reason: bool = False) -> str:
    body = [f"    x{k} = {k}" for k in range(body_lines)]
    if reason is not None:
        body.insert(0, f"    # long: {reason}")
    if nested_reason:
        body.insert(0, "    def inner():\n        # long: the helper's own reason\n        return 0")
    return f"def {name}():\n" + "\n".join(body) + "\n    return 0\n"


def test_the_guard_sees_a_long_function_without_a_reason():
    # The guard itself can fail: 81 lines with no reason are caught, 80 are not, and
    # a reason line (its own, not a nested helper's) lets a long function pass.
    assert _unexplained_long_functions(_function("f", 79)) == [("f", 1, 81)]
    assert _unexplained_long_functions(_function("f", 78)) == []
    assert _unexplained_long_functions(_function("f", 79, reason="one table of formulas")) == []
    assert _unexplained_long_functions(_function("f", 79, reason=None, nested_reason=True)) == [("f", 1, 84)]
    assert _unexplained_long_functions(_function("f", 79).replace("    x0", "    # long:\n    x0")) == [("f", 1, 82)]
