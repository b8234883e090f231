"""Count the test functions that check against an outside reference, and all test functions.

A test function counts as a reference check when it carries ``@pytest.mark.reference`` (or its
module's ``pytestmark`` does): it compares the code with a published value, an independent
library (mpmath, iapws, scipy.stats, ...) or a hand computation of a published formula written
in the test. Parametrized cases count once: the unit is the function, as written.

Usage: ``python scripts/count_reference_tests.py [--per-file] [--files tests/test_a.py ...]``
"""

from __future__ import annotations

import argparse
import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _is_reference_mark(node: ast.expr) -> bool:
    """True for ``pytest.mark.reference`` or ``pytest.mark.reference(...)``."""
    if isinstance(node, ast.Call):
        node = node.func
    return (isinstance(node, ast.Attribute) and node.attr == "reference"
            and isinstance(node.value, ast.Attribute) and node.value.attr == "mark")


def _module_marked(tree: ast.Module) -> bool:
    for stmt in tree.body:
        if isinstance(stmt, ast.Assign) and any(
                isinstance(t, ast.Name) and t.id == "pytestmark" for t in stmt.targets):
            values = stmt.value.elts if isinstance(stmt.value, ast.List | ast.Tuple) else [
                stmt.value]
            return any(_is_reference_mark(v) for v in values)
    return False


def count_file(path: Path) -> tuple[int, int]:
    """(reference test functions, all test functions) of one test file."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    module_ref = _module_marked(tree)
    total = ref = 0
    for node in ast.walk(tree):
        if isinstance(node, ast.FunctionDef) and node.name.startswith("test_"):
            total += 1
            if module_ref or any(_is_reference_mark(d) for d in node.decorator_list):
                ref += 1
    return ref, total


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--per-file", action="store_true", help="one line per test file")
    parser.add_argument("--files", nargs="*", type=Path, help="count only these test files")
    args = parser.parse_args(argv)
    files = args.files or sorted((ROOT / "tests").glob("test_*.py"))
    grand_ref = grand_total = 0
    for path in files:
        ref, total = count_file(path)
        grand_ref += ref
        grand_total += total
        if args.per_file:
            print(f"{path.name:28s} {ref:4d} of {total:4d}")
    share = 100.0 * grand_ref / grand_total if grand_total else 0.0
    print(f"{grand_ref} of {grand_total} test functions check against an outside reference "
          f"({share:.0f} %)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
