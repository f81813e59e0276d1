"""The derivation cache is keyed by every file that can change the generated code.

DEVELOPERS.md ("The derivation cache"): the key covers the kit version, the
polarity, the code generator and every ``kit`` module the topology's module
imports, directly or through others; editing a shared block or a kind
rebuilds exactly the topologies that use it.

The checks work on a copy of the ``kit`` package in a scratch folder with a
cache folder of their own (``BIASBOOK_CACHE``, see kit/model/cache.py), each
step in a fresh interpreter so that nothing compiled earlier is remembered
in memory: build a model, edit the copy, build it again and look at what the
cache holds.  Whether a build derived anything shows in whether SymPy was
loaded (a warm start loads none, tests/test_import_light.py).
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

BUILD = """
import json, sys
import kit
from kit import topologies
from kit.model.cache import cache_directory
from kit.model.compiled import compile_model

out = {"kit": kit.__file__, "models": {}}
for key in sys.argv[1:]:
    topology = topologies.get(key)
    model = compile_model(topology, topology.polarities[0])
    name = model.manifest["key"]
    out["models"][key] = {"key": name, "code": (cache_directory() / f"{name}.py").read_text()}
out["derived"] = "sympy" in sys.modules
print(json.dumps(out))
"""


class KitCopy:
    """A copy of the kit package and a cache folder, and builds of it in fresh interpreters."""

    def __init__(self, root):
        self.root = root
        self.package = root / "src" / "kit"
        shutil.copytree(ROOT / "kit", self.package, ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
        self.cache = root / "cache"

    def build(self, *keys):
        env = dict(os.environ, PYTHONPATH=str(self.package.parent), BIASBOOK_CACHE=str(self.cache),
                   PYTHONDONTWRITEBYTECODE="1")
        done = subprocess.run([sys.executable, "-c", BUILD, *keys], cwd=self.root, env=env,
                              capture_output=True, text=True, timeout=600)
        assert done.returncode == 0, done.stderr
        out = json.loads(done.stdout.strip().splitlines()[-1])
        assert Path(out["kit"]).resolve() == (self.package / "__init__.py").resolve()  # the copy ran
        return out

    def edit(self, relative, old, new):
        path = self.package / relative
        text = path.read_text(encoding="utf-8")
        assert text.count(old) == 1, (relative, old)
        path.write_text(text.replace(old, new), encoding="utf-8")

    def append(self, relative, line):
        path = self.package / relative
        path.write_text(path.read_text(encoding="utf-8") + line + "\n", encoding="utf-8")

    def generated(self):
        return sorted(p.name for p in self.cache.rglob("*.py"))


@pytest.fixture()
def copy(tmp_path):
    return KitCopy(tmp_path)


# The fallback current of blocks.positive_or shapes the divider's declared
# start: the generated code prints it as a constant.
FALLBACK_OLD = "def positive_or(expression, fallback=1e-9):"
FALLBACK_NEW = "def positive_or(expression, fallback=3e-9):"


def _fallbacks(code):
    """The constants the generated code passes to its positive_or guard."""
    return set(re.findall(r"_positive_or\(.*, ([0-9.e+-]+)\)\s*$", code, flags=re.M))


def test_a_warm_build_reuses_the_cache(copy):
    cold = copy.build("divider_source")
    warm = copy.build("divider_source")
    assert cold["derived"] and not warm["derived"]
    assert warm["models"] == cold["models"]
    assert len(copy.generated()) == 1


def test_editing_a_shared_block_rebuilds_the_topology(copy):
    before = copy.build("divider_source")["models"]["divider_source"]
    assert _fallbacks(before["code"]) == {"1.0e-9"}
    copy.edit("circuit/blocks.py", FALLBACK_OLD, FALLBACK_NEW)
    after = copy.build("divider_source")
    model = after["models"]["divider_source"]
    assert after["derived"]  # derived again, not read from the cache
    assert model["key"] != before["key"]
    assert _fallbacks(model["code"]) == {"3.0e-9"}  # the new code carries the edit
    assert len(copy.generated()) == 2
    # and the edited kit keeps using its own code from then on
    again = copy.build("divider_source")
    assert not again["derived"] and again["models"] == after["models"]


def test_editing_a_kind_rebuilds_its_users_and_nothing_else(copy):
    # kit/devices/mosfet.py is no part of the divider's sources: an edit there
    # rebuilds the MOSFET mirror only.
    before = copy.build("divider_source", "mos_mirror")["models"]
    copy.append("devices/mosfet.py", "# edited by a test")
    after = copy.build("divider_source")
    assert not after["derived"]
    assert after["models"]["divider_source"] == before["divider_source"]
    mos = copy.build("mos_mirror")
    assert mos["derived"]
    assert mos["models"]["mos_mirror"]["key"] != before["mos_mirror"]["key"]


def test_editing_a_file_no_topology_imports_rebuilds_nothing(copy):
    before = copy.build("divider_source")["models"]
    copy.append("topologies/wilson.py", "# edited by a test")
    after = copy.build("divider_source")
    assert not after["derived"]
    assert after["models"] == before
    assert len(copy.generated()) == 1
