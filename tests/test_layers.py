"""The kit's layers look only down: every import in kit/, function level included.

The order is the one DEVELOPERS.md draws (a module imports only from its own
layer or the ones below)::

    base (errors, quantities, safety, words) -> devices -> circuit -> topologies
      -> model -> analysis -> report -> faces (panels, review, record, record_scan, cli)

The package module ``kit`` (kit/__init__.py) plays two parts.  Its module
level is base: it holds the version and re-exports ``DesignError``, and it
runs before any of its submodules, so it may import nothing above base at
module level.  Its lazy public names (``kit.design``, ``kit.evaluate``,
``kit.topology``, ...; imports inside functions) are the faces' way into
every layer, so other modules below the faces may read only the package's
base names through ``import kit`` (``kit.__version__``); ``kit.evaluate``
read from the model layer would be an upward lookup in disguise.

Imports are read from the source with :mod:`ast` (never by importing), at
any depth in the file; ``from kit.a import b`` counts as an import of
``kit.a.b`` when that is a module, else of ``kit.a``.  Dynamic discovery
(``importlib.import_module`` of a package's own modules) stays inside one
layer and is not followed.  Common practice, no source: a layered
architecture with downward-only dependencies.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "kit"

LAYER_ORDER = ("base", "devices", "circuit", "topologies", "model", "analysis", "report", "faces")
# First name under kit -> layer.  A new top-level module must be placed here.
LAYER_OF = {
    "errors": "base", "quantities": "base", "safety": "base", "words": "base",
    "devices": "devices",
    "circuit": "circuit",
    "topologies": "topologies",
    "model": "model",
    "analysis": "analysis",
    "report": "report",
    "panels": "faces", "review": "faces", "record": "faces", "record_scan": "faces", "cli": "faces",
}
# What the package module offers every layer (its module-level, base part).
PACKAGE_BASE_NAMES = {"__version__", "__file__", "__name__", "__path__", "DesignError"}


def module_name(path, package=PACKAGE):
    parts = list(path.relative_to(package.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def is_module(name, package=PACKAGE):
    """Whether ``kit.a.b`` names a module or package of the tree (read from the files)."""
    candidate = package.parent.joinpath(*name.split("."))
    return candidate.with_suffix(".py").is_file() or (candidate / "__init__.py").is_file()


def layer(name):
    """Layer of module ``kit.x...``; ``None`` for the package module ``kit`` itself."""
    parts = name.split(".")
    if len(parts) == 1:
        return None
    return LAYER_OF.get(parts[1], f"unplaced module kit.{parts[1]}")


def rank(layer_name):
    return LAYER_ORDER.index(layer_name)


class Imports(ast.NodeVisitor):
    """Every ``kit`` import of one file with its line, and whether it sits in a function."""

    def __init__(self, module, is_package, package=PACKAGE):
        self.tree = package
        self.package = module if is_package else module.rpartition(".")[0]
        self.found = []  # (imported module, line, inside a function)
        self.depth = 0
        self.kit_aliases = set()  # names bound to the package module itself

    def _function(self, node):
        self.depth += 1
        self.generic_visit(node)
        self.depth -= 1

    visit_FunctionDef = visit_AsyncFunctionDef = visit_Lambda = _function

    def visit_Import(self, node):
        for alias in node.names:
            if alias.name.split(".")[0] == "kit":
                self.found.append((alias.name, node.lineno, self.depth > 0))
                if alias.name == "kit" or alias.asname is None:
                    # ``import kit.a.b`` binds ``kit`` too: attribute reads through it are checked
                    self.kit_aliases.add(alias.asname or "kit")

    def visit_ImportFrom(self, node):
        base = node.module or ""
        if node.level:
            anchor = self.package.split(".")
            anchor = anchor[: len(anchor) - node.level + 1]
            base = ".".join(anchor + ([base] if base else []))
        if base.split(".")[0] != "kit":
            return
        for alias in node.names:
            full = f"{base}.{alias.name}"
            if is_module(full, self.tree):
                self.found.append((full, node.lineno, self.depth > 0))
            elif base == "kit":
                self.found.append((f"kit:{alias.name}", node.lineno, self.depth > 0))
            else:
                self.found.append((base, node.lineno, self.depth > 0))


def package_attribute_reads(tree, aliases):
    """``(attribute, line)`` of every ``kit.<attribute>`` read through the package module."""
    out = []
    for node in ast.walk(tree):
        if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                and node.value.id in aliases):
            out.append((node.attr, node.lineno))
    return out


def sources():
    return sorted(PACKAGE.rglob("*.py"))


def upward_imports(path, package=PACKAGE):
    """Every import of ``path`` that looks up the layer order, in words."""
    module = module_name(path, package)
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    visitor = Imports(module, path.name == "__init__.py", package)
    visitor.visit(tree)
    own = layer(module)
    problems = []
    if own is not None and own.startswith("unplaced"):
        return [f"{module}: {own}; add it to a layer in DEVELOPERS.md and LAYER_OF"]
    for target, line, in_function in visitor.found:
        where = f"{path.relative_to(package.parent)}:{line}"
        if target.startswith("kit:"):
            # ``from kit import name`` where name is not a module: a name of the package module
            name = target[4:]
            if own is not None and own != "faces" and name not in PACKAGE_BASE_NAMES:
                problems.append(f"{where}: {module} ({own}) takes kit.{name} from the public facade")
            continue
        theirs = layer(target)
        if theirs is None:
            continue  # ``import kit``: its attribute reads are checked below
        if theirs.startswith("unplaced"):
            problems.append(f"{where}: {module} imports {target}, an {theirs}")
        elif own is None:
            # The package module: base at module level, anything from inside a function.
            if not in_function and theirs != "base":
                problems.append(f"{where}: kit/__init__.py imports {target} ({theirs}) at module level")
        elif rank(theirs) > rank(own):
            problems.append(f"{where}: {module} ({own}) imports {target} ({theirs})"
                            + (" inside a function" if in_function else ""))
    if own is not None and own != "faces":
        for attribute, line in package_attribute_reads(tree, visitor.kit_aliases):
            if attribute not in PACKAGE_BASE_NAMES and not is_module(f"kit.{attribute}", package):
                problems.append(f"{path.relative_to(package.parent)}:{line}: {module} ({own}) reads "
                                f"kit.{attribute} through the public facade")
            elif is_module(f"kit.{attribute}", package) and rank(layer(f"kit.{attribute}")) > rank(own):
                problems.append(f"{path.relative_to(package.parent)}:{line}: {module} ({own}) reads "
                                f"kit.{attribute} ({layer('kit.' + attribute)})")
    return problems


@pytest.mark.parametrize("path", sources(), ids=lambda p: str(p.relative_to(PACKAGE.parent)))
def test_imports_look_only_down(path):
    assert upward_imports(path) == []


def test_every_top_level_module_has_a_layer():
    names = {p.stem if p.suffix == ".py" else p.name for p in PACKAGE.iterdir()
             if (p.suffix == ".py" and p.name != "__init__.py") or (p / "__init__.py").is_file()}
    assert names <= set(LAYER_OF), sorted(names - set(LAYER_OF))


# -- the checker itself: each rule must be able to fail ----------------------------------

def _problems_of(tmp_path, relative, text):
    """Run the checker on a scratch file placed as if it were ``kit/<relative>``."""
    fake = tmp_path / "kit"
    for name in ("model", "devices", "analysis", "report"):
        (fake / name).mkdir(parents=True, exist_ok=True)
        (fake / name / "__init__.py").write_text("")
    for name in ("errors.py", "__init__.py", "analysis/evaluation.py", "report/text.py"):
        (fake / name).write_text("")
    target = fake / relative
    target.write_text(text)
    return upward_imports(target, fake)


@pytest.mark.parametrize("text, bad", [
    ("from kit.analysis.evaluation import evaluate\n", True),
    ("def f():\n    from kit.report import text\n", True),  # function level counts
    ("from ..analysis import evaluation\n", True),  # relative import resolved
    ("import kit\n\ndef f(d):\n    return kit.evaluate(d)\n", True),  # through the facade
    ("from kit import evaluate\n", True),
    ("import kit\nVERSION = kit.__version__\n", False),
    ("from kit.errors import ParameterError\nfrom kit.devices import KINDS\n", False),
    ("from . import codegen\n", False),
])
def test_checker_sees_upward_imports(tmp_path, text, bad):
    problems = _problems_of(tmp_path, "model/probe.py", text)
    assert bool(problems) == bad, problems


def test_checker_holds_the_package_module_to_base_at_module_level(tmp_path):
    assert _problems_of(tmp_path, "__init__.py", "from kit.report import text\n")
    assert not _problems_of(tmp_path, "__init__.py", "def f():\n    from kit.report import text\n")
