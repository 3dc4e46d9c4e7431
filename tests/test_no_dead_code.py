"""No dead code in the package: no import a module does not use, and nothing that only the
tests (or nobody) call, read or set.

Unused imports are found here from the syntax tree (a name imported at module level that the
module never names again); the rest by vulture (a general-purpose dead-code finder, in the
``test`` extra) over ``src/sharpzone`` alone, so that a function the tests call but the
program does not counts as dead. Public API that the program itself does not call is listed
in its package's ``__all__`` (``sharpzone.optics``, ``sharpzone.catalog.service``), which
vulture counts as use.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "src" / "sharpzone"

# Names that libraries read or call, not our code: typer's commands (by their decorator),
# SQLAlchemy's TypeDecorator hooks and sqlite3's isolation level, click's and rich's
# overrides, the io protocol, PEP 562 module hooks, the signature typer reads, Pillow's
# pixel limit.
FRAMEWORK_DECORATORS = ["@*.command", "@*.callback", "@*.listens_for"]
FRAMEWORK_NAMES = [
    "impl", "cache_ok", "process_bind_param", "isolation_level", "_coerce_value", "_usage_display_name",
    "display_type_rich", "readinto", "__getattr__", "__dir__", "__signature__", "__annotations__",
    "MAX_IMAGE_PIXELS",
]
# Columns written by name (rows as dicts) and kept in the catalogue and its bundles.
STORED_COLUMNS = ["exif_lens_model", "measured_at", "seen_at"]

# Dead code in modules that other work changes at the same time; each entry goes with the
# code, and the test says when an entry is no longer needed. (path below src/sharpzone, name)
PENDING_REMOVAL: set[tuple[str, str]] = set()
PENDING_IMPORTS: set[tuple[str, str]] = set()


def _modules():
    return sorted(PACKAGE.rglob("*.py"))


def _where(path: Path) -> str:
    return path.relative_to(PACKAGE).as_posix()


def _names_in(node: ast.AST) -> set[str]:
    """Every name the code under ``node`` uses, also inside string annotations."""
    names = set()
    for sub in ast.walk(node):
        if isinstance(sub, ast.Name):
            names.add(sub.id)
        elif isinstance(sub, ast.Constant) and isinstance(sub.value, str) and sub.value.isidentifier():
            names.add(sub.value)  # "Session" as an annotation, a name listed in __all__
    for sub in ast.walk(node):
        annotation = getattr(sub, "annotation", None) or getattr(sub, "returns", None)
        if isinstance(annotation, ast.Constant) and isinstance(annotation.value, str):
            try:
                names |= _names_in(ast.parse(annotation.value, mode="eval"))
            except SyntaxError:
                pass
    return names


def _imports(scope: ast.AST, lines: list[str]):
    """The import statements of ``scope`` itself (not of the functions inside it), except
    ``from __future__`` and those marked ``noqa``."""
    pending = list(ast.iter_child_nodes(scope))
    while pending:
        node = pending.pop()
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
            continue
        if isinstance(node, (ast.Import, ast.ImportFrom)):
            if not (isinstance(node, ast.ImportFrom) and node.module == "__future__") and "noqa" not in lines[node.lineno - 1]:
                yield node
        else:
            pending.extend(ast.iter_child_nodes(node))


def unused_imports(path: Path) -> set[str]:
    """Names ``path`` imports (at module level or in a function) that the module, or that
    function, never uses; a package's ``__init__`` re-exports, so it is not asked."""
    source = path.read_text(encoding="utf-8")
    lines = source.splitlines()
    tree = ast.parse(source)
    unused = set()
    scopes = [tree, *(node for node in ast.walk(tree) if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)))]
    for scope in scopes:
        imported = {alias.asname or alias.name.split(".")[0]
                    for node in _imports(scope, lines) for alias in node.names}
        if imported:
            unused |= imported - _names_in(scope)
    return unused


def test_the_import_finder_finds_an_unused_import(tmp_path):
    module = tmp_path / "module.py"
    module.write_text("from __future__ import annotations\nimport math\nimport os.path\nfrom typing import Any, TYPE_CHECKING\n"
                      "import re  # noqa: F401 - re-exported\n\nif TYPE_CHECKING:\n    from pathlib import Path\n\n"
                      "def f(x: 'Path') -> Any:\n    from json import dumps, loads\n    return os.path.join(x, dumps(1))\n",
                      encoding="utf-8")
    assert unused_imports(module) == {"math", "loads"}


def test_no_module_imports_what_it_does_not_use():
    found = {(_where(path), name) for path in _modules() if path.name != "__init__.py" for name in unused_imports(path)}
    assert found - PENDING_IMPORTS == set(), "unused imports"
    assert PENDING_IMPORTS - found == set(), "these imports are gone: take them off PENDING_IMPORTS"


def test_nothing_in_the_package_is_dead():
    import vulture  # in the test extra: pip install -e ".[test]"

    finder = vulture.Vulture(ignore_names=FRAMEWORK_NAMES + STORED_COLUMNS, ignore_decorators=FRAMEWORK_DECORATORS)
    finder.scavenge([str(PACKAGE)])
    found = {(_where(Path(item.filename)), item.name): f"{_where(Path(item.filename))}:{item.first_lineno}: {item.message}"
             for item in finder.get_unused_code(min_confidence=60)}
    dead = sorted(message for key, message in found.items() if key not in PENDING_REMOVAL)
    assert dead == [], "dead code (nothing in the package uses it; a test alone does not count)"
    assert PENDING_REMOVAL - set(found) == set(), "these are gone: take them off PENDING_REMOVAL"
