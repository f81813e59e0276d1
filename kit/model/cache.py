"""Generated code on disk, keyed by every source file that can change it.

The key of a topology's generated code hashes the kit's version, the
polarity, the code generator and every ``kit`` module the topology's module
imports, directly or through others (found by reading the files, never by
importing them, so a warm start stays free of SymPy).  Editing a shared
block, a device kind or the circuit builder therefore rebuilds every
topology that uses it, and nothing else.

Where the code lives: ``$BIASBOOK_CACHE/<version>``, default
``~/.cache/biasbook/<version>``.  Writes are atomic (a temporary file renamed
into place) so processes racing on an empty cache each see whole files; a
read-only home falls back to a scratch folder.
"""

from __future__ import annotations

import ast
import hashlib
import importlib.util
import json
import os
from functools import lru_cache
from pathlib import Path

import kit

PACKAGE = Path(kit.__file__).parent
# The code generator itself shapes every generated file.
GENERATOR_MODULES = ("kit.model.codegen",)


def cache_directory():
    """Where generated code is kept: ``$BIASBOOK_CACHE``, else ``~/.cache/biasbook``."""
    root = os.environ.get("BIASBOOK_CACHE")
    base = Path(root) if root else Path.home() / ".cache" / "biasbook"
    return base / kit.__version__


def module_path(module, package=PACKAGE):
    """``kit.a.b`` -> ``<package>/a/b.py`` (or ``.../b/__init__.py``), without importing anything."""
    parts = module.split(".")[1:]
    candidate = package.joinpath(*parts)
    if candidate.is_dir():
        return candidate / "__init__.py"
    return candidate.with_suffix(".py")


def _imports(path, module):
    """The ``kit`` modules one source file imports (at any depth in the file)."""
    # Every topology's key reads the same shared files: parse each once per
    # process and version of the file.
    stat = path.stat()
    return _imports_of(path, module, stat.st_mtime_ns, stat.st_size)


@lru_cache(maxsize=None)
def _imports_of(path, module, mtime_ns, size):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = set()
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names if a.name.split(".")[0] == "kit"}
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                base = ".".join(package.split(".")[: len(package.split(".")) - node.level + 1]
                                + ([base] if base else []))
            if base.split(".")[0] != "kit":
                continue
            found.add(base)
            found |= {f"{base}.{a.name}" for a in node.names}  # names that are submodules
    return frozenset(found)


def source_files(module, package=PACKAGE):
    """Every source file of ``module`` and of the ``kit`` modules it imports, transitively."""
    seen, files, todo = set(), [], [module]
    while todo:
        current = todo.pop()
        if current in seen:
            continue
        seen.add(current)
        path = module_path(current, package)
        if not path.exists():
            continue  # a name imported from a module, not a module
        files.append(path)
        todo.extend(_imports(path, current))
        # A package's modules run their package's __init__ first.
        parent = current.rpartition(".")[0]
        if parent:
            todo.append(parent)
    return sorted(files)


def source_key(topology_module, polarity, package=PACKAGE):
    """Hash of everything the generated code of ``topology_module`` depends on."""
    digest = hashlib.sha256()
    digest.update(kit.__version__.encode())
    digest.update(polarity.encode())
    files = set(source_files(topology_module, package))
    for generator in GENERATOR_MODULES:
        files |= set(source_files(generator, package))
    for path in sorted(files):
        digest.update(str(path.relative_to(package)).encode())
        digest.update(path.read_bytes())
    return digest.hexdigest()[:20]


def load_module(path, name):
    """Import a generated module from its file."""
    # safe: the file is code kit.model.codegen generated from the kit's own
    # equations (never from user text); its hash is checked against the manifest.
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def structure_data(topology, polarity):
    """The manifest's ``structure`` part, without generating code when none is cached yet.

    Listing topologies or validating a design needs only what the circuit
    says about itself, which is quick to read off its equations.
    """
    return _structure_data(topology.key, polarity)


@lru_cache(maxsize=None)
def _structure_data(topology_key, polarity):
    from kit import topologies

    topology = topologies.get(topology_key)
    topology.check_polarity(polarity)
    if (topology_key, polarity) in _compiled_keys:  # already compiled in this process
        return _compiled(topology_key, polarity)[0]["structure"]
    key = f"{topology.key}-{polarity}-{source_key(topology.build.__module__, polarity)}"
    directory = cache_directory()
    for path, pick in ((directory / f"{key}.json", lambda m: m["structure"]),
                       (directory / f"{key}.structure.json", lambda m: m)):
        if path.exists():
            try:
                return pick(json.loads(path.read_text()))
            except (OSError, ValueError, KeyError):
                pass
    from kit.model.codegen import structure_of

    data = structure_of(topology.equations(polarity))
    try:
        directory.mkdir(parents=True, exist_ok=True)
        path = directory / f"{key}.structure.json"
        temporary = path.with_suffix(f".{os.getpid()}.tmp")
        temporary.write_text(json.dumps(data))
        temporary.replace(path)
    except OSError:
        pass
    return data


_compiled_keys = set()


def compiled(topology, polarity):
    """``(manifest, module)`` of a topology and polarity, generated once and kept on disk."""
    return _compiled(topology.key, polarity)


@lru_cache(maxsize=None)
def _compiled(topology_key, polarity):
    from kit import topologies

    topology = topologies.get(topology_key)
    topology.check_polarity(polarity)
    key = f"{topology.key}-{polarity}-{source_key(topology.build.__module__, polarity)}"
    directory = cache_directory()
    code_path = directory / f"{key}.py"
    manifest_path = directory / f"{key}.json"
    manifest = None
    if code_path.exists() and manifest_path.exists():
        try:
            manifest = json.loads(manifest_path.read_text())
            digest = hashlib.sha256(code_path.read_bytes()).hexdigest()
            if manifest.get("source_sha256") != digest:
                manifest = None
        except (OSError, ValueError):
            manifest = None
    if manifest is None:
        from kit.model.codegen import generate

        source, manifest = generate(topology.equations(polarity), key)
        try:
            directory.mkdir(parents=True, exist_ok=True)
            for path, text in ((code_path, source), (manifest_path, json.dumps(manifest))):
                temporary = path.with_suffix(f".{os.getpid()}.tmp")
                temporary.write_text(text)
                temporary.replace(path)
        except OSError:
            # A read-only home still works: compile in memory from a scratch file.
            import tempfile

            scratch = Path(tempfile.mkdtemp(prefix="biasbook-")) / f"{key}.py"
            scratch.write_text(source)
            code_path = scratch
    module = load_module(code_path, f"_biasbook_generated_{key.replace('-', '_')}")
    _compiled_keys.add((topology_key, polarity))
    return manifest, module
