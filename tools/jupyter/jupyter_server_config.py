"""Jupyter server settings of this repository: saving a repository notebook strips it.

``python3 dev.py tour`` puts this folder first on ``JUPYTER_CONFIG_PATH``, so
the JupyterLab it starts loads this file beside the user's own settings; for
the one setting made here (``ContentsManager.pre_save_hook``) this file wins.
Any other Jupyter server started in the repository gets it with::

    JUPYTER_CONFIG_PATH=tools/jupyter jupyter lab

Every save (autosave too) of a notebook under ``notebooks/`` keeps only the
text outputs and execution counts of the check cells and drops the rest —
inline Bokeh scripts, widget views, widget state — before the file is written
(``tools/notebooks.py`` holds the one stripper).  The open page keeps its
plots; only the file on disk is lean.  Notebooks elsewhere are left alone.
"""

import importlib.util
import warnings
from pathlib import Path

_REPOSITORY = Path(__file__).resolve().parents[2]
# tools/ is no package and the venv need not hold it: load the module by path.
_spec = importlib.util.spec_from_file_location("biasbook_notebook_tools", _REPOSITORY / "tools" / "notebooks.py")
_notebook_tools = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(_notebook_tools)

c = get_config()  # noqa: F821 -- provided by the config loader
# traitlets validates a configured value twice while loading it
# (ipython/traitlets#467), and jupyter_server's validator then warns that this
# hook overrides itself.  Only that self-override is silenced: a clash with
# another hook still shows.
warnings.filterwarnings("ignore", category=UserWarning, message=(
    r"Overriding existing pre_save_hook \(strip_repository_notebook\) "
    r"with a new one \(strip_repository_notebook\)"))
c.ContentsManager.pre_save_hook = _notebook_tools.pre_save_hook_for(_REPOSITORY / "notebooks")
