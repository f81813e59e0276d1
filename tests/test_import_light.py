"""A warm start stays light: no SymPy, Bokeh, ipywidgets or IPython.

DEVELOPERS.md promises that ``import kit`` imports none of them and that
SymPy loads only when equations are derived (a cold cache).  Each check runs
in a fresh interpreter, so modules that pytest or other tests loaded do not
count (the same practice as scikit-rf's skrf/tests/test_init.py).  The cache
is a folder of this test's own: a first interpreter fills it (and must load
SymPy, which shows the probe sees an import), a second one reads it.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
HEAVY = ("sympy", "bokeh", "ipywidgets", "IPython")
# One topology of each family the probe touches: a BJT source, a BJT mirror, a MOSFET mirror.
TOPOLOGIES = ("divider_source", "basic_mirror", "mos_mirror")

PROBE = """
import json, sys
heavy = {heavy!r}

def loaded():
    return sorted({{m.split(".")[0] for m in sys.modules}} & set(heavy))

import kit
after_import = loaded()
results = {{}}
for key in {topologies!r}:
    for polarity in kit.topology(key).polarities:
        ev = kit.evaluate(kit.design(key, polarity))
        results[f"{{key}}-{{polarity}}"] = ev.i_out
print(json.dumps({{"after_import": after_import, "after_evaluate": loaded(), "i_out": results}}))
"""


def _run(cache):
    code = PROBE.format(heavy=HEAVY, topologies=TOPOLOGIES)
    env = dict(os.environ, BIASBOOK_CACHE=str(cache))
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=env, capture_output=True, text=True,
                          timeout=600)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


@pytest.fixture(scope="module")
def cold_and_warm(tmp_path_factory):
    cache = tmp_path_factory.mktemp("light-cache")
    cold = _run(cache)
    warm = _run(cache)
    return cold, warm


def test_the_topologies_probed_exist():
    import kit

    keys = {t.key for t in kit.list_topologies()}
    assert set(TOPOLOGIES) <= keys


def test_import_kit_loads_none_of_the_heavy_modules(cold_and_warm):
    cold, warm = cold_and_warm
    assert cold["after_import"] == []
    assert warm["after_import"] == []


def test_a_cold_cache_derives_with_sympy(cold_and_warm):
    # The probe sees an import when there is one: deriving equations needs SymPy.
    cold, _ = cold_and_warm
    assert "sympy" in cold["after_evaluate"]


def test_design_and_evaluate_on_a_warm_cache_load_none_of_them(cold_and_warm):
    cold, warm = cold_and_warm
    assert warm["after_evaluate"] == [], f"a warm start loaded {warm['after_evaluate']}"
    # and it computed the same currents from the cached code
    assert warm["i_out"] == cold["i_out"]
    assert len(warm["i_out"]) == 2 * len(TOPOLOGIES)
