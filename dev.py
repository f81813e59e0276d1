#!/usr/bin/env python3
"""Set up, tour and test biasbook from a fresh checkout.

Standard library only, so any Python 3.11+ runs it before anything else is
installed.  Each command first makes sure ``.venv`` beside this file exists and
holds ``biasbook[dev]`` (installed editable); the install is skipped while the
SHA-256 of ``pyproject.toml`` matches the one recorded in ``.venv``.

Usage
-----
``python3 dev.py setup``
    Create ``.venv`` and install the project into it; in a git checkout, also
    register the notebook filter ``keep-check-outputs`` (see .gitattributes).
``python3 dev.py tour``
    Open the tour notebook in JupyterLab; saving a notebook under notebooks/
    strips it (tools/jupyter/jupyter_server_config.py).
``python3 dev.py test [pytest args...]``
    Run the test suite; extra arguments go to pytest unchanged.

Examples
--------
Run only the packaging tests and stop at the first failure::

    python3 dev.py test -k packaging -x
"""

from __future__ import annotations

import hashlib
import os
import shutil
import subprocess
import sys
import venv
from pathlib import Path

ROOT = Path(__file__).resolve().parent
VENV = ROOT / ".venv"
BIN = VENV / ("Scripts" if os.name == "nt" else "bin")
STAMP = VENV / "biasbook-install.sha256"
# Jupyter settings of the repository: the pre-save hook that strips notebooks.
JUPYTER_SETTINGS = ROOT / "tools" / "jupyter"
# The git clean filter named in .gitattributes for *.ipynb.
NOTEBOOK_FILTER = "keep-check-outputs"

# Debian packages the browser and PDF tests use, with a file each one installs.
BROWSER_PACKAGES = {
    "chromium": "/usr/bin/chromium",
    "chromium-driver": "/usr/bin/chromedriver",
    "poppler-utils": "/usr/bin/pdftoppm",
}


def say(message: str) -> None:
    """Print one stage message, flushed so it shows before a child's output."""
    print(f"[dev.py] {message}", flush=True)


def run(command: list[str], **kwargs) -> int:
    """Run a command, echoing it, and return its exit code."""
    say("$ " + " ".join(str(part) for part in command))
    return subprocess.call([str(part) for part in command], **kwargs)


def pyproject_digest() -> str:
    """SHA-256 of pyproject.toml: the install is redone when it changes."""
    return hashlib.sha256((ROOT / "pyproject.toml").read_bytes()).hexdigest()


def ensure_venv() -> None:
    """Create .venv if missing and install biasbook[dev] if it is stale."""
    if not (BIN / "python").exists() and not (BIN / "python.exe").exists():
        say(f"setting up {VENV} (Python {sys.version.split()[0]})")
        venv.create(VENV, with_pip=True, symlinks=os.name != "nt")
    digest = pyproject_digest()
    if STAMP.exists() and STAMP.read_text().strip() == digest:
        say("biasbook[dev] is up to date in .venv")
        return
    say("installing biasbook[dev] into .venv (about a minute the first time)")
    code = run([BIN / "python", "-m", "pip", "install", "-e", ".[dev]"], cwd=ROOT)
    if code != 0:
        sys.exit(f"[dev.py] pip install failed with exit code {code}")
    STAMP.write_text(digest + "\n")
    say("installed")


def ensure_browser() -> None:
    """Install Debian's chromium and poppler when missing and we are allowed to."""
    missing = [name for name, path in BROWSER_PACKAGES.items() if not Path(path).exists()]
    if not missing:
        return
    can_install = (
        hasattr(os, "geteuid") and os.geteuid() == 0
        and Path("/etc/debian_version").exists() and shutil.which("apt-get")
    )
    if not can_install:
        say(f"missing {', '.join(missing)} (needs root on Debian): browser tests will be skipped")
        return
    say(f"installing Debian packages: {' '.join(missing)}")
    env = dict(os.environ, DEBIAN_FRONTEND="noninteractive")
    if run(["apt-get", "update"], env=env) != 0 or run(
        ["apt-get", "install", "-y", "--no-install-recommends", *missing], env=env
    ) != 0:
        say("apt-get failed: browser tests will be skipped")


def register_notebook_filter(root: Path = ROOT) -> bool:
    """Register the notebook clean filter in the local git config of ``root``.

    ``git add`` then stores every notebook the way tools/notebooks.py strips
    it, even one saved by a Jupyter that never loaded the pre-save hook.  The
    command is standard library only and runs with this interpreter; git
    starts it in the top folder of the working tree.  Returns False (and says
    why) outside a git checkout.
    """
    if shutil.which("git") is None:
        say("git not found: notebook filter not registered")
        return False
    inside = subprocess.run(["git", "-C", str(root), "rev-parse", "--show-toplevel"],
                            capture_output=True, text=True)
    if inside.returncode != 0:
        say("not a git checkout: notebook filter not registered")
        return False
    if Path(inside.stdout.strip()).resolve() != root.resolve():
        # .gitattributes and the filter's relative command assume the top folder
        say(f"{root} is not the top of its git checkout: notebook filter not registered")
        return False
    python = Path(sys.executable).as_posix()
    settings = {
        "clean": f'"{python}" tools/notebooks.py strip -',
        # checkout passes notebooks through unchanged; git refuses a required
        # filter without a smudge command (`git worktree add` failed).  `cat`, not
        # a script of the tree: the tree may not be checked out yet.
        "smudge": "cat",
        # a notebook that cannot be stripped stops `git add` instead of going in whole
        "required": "true",
    }
    for key, value in settings.items():
        subprocess.run(["git", "-C", str(root), "config", "--local", f"filter.{NOTEBOOK_FILTER}.{key}", value],
                       check=True)
    say(f"git filter {NOTEBOOK_FILTER} registered: notebooks are stripped on `git add`")
    return True


def jupyter_environment() -> dict[str, str]:
    """Environment for a Jupyter server on the repository: inline Bokeh, our settings first."""
    paths = [str(JUPYTER_SETTINGS), *filter(None, os.environ.get("JUPYTER_CONFIG_PATH", "").split(os.pathsep))]
    return dict(os.environ, BOKEH_RESOURCES="inline", JUPYTER_CONFIG_PATH=os.pathsep.join(paths))


def tour() -> int:
    """Start JupyterLab on the tour notebook (or the notebooks folder)."""
    targets = [t for t in ("notebooks/tour.ipynb", "notebooks") if (ROOT / t).exists()]
    if not targets or targets[0] != "notebooks/tour.ipynb":
        say("notebooks/tour.ipynb does not exist yet: opening "
            + ("the notebooks/ folder" if targets else "the repository folder"))
    command = [BIN / "jupyter", "lab", "--ip=127.0.0.1", "--ServerApp.open_browser=True", *targets[:1]]
    if hasattr(os, "geteuid") and os.geteuid() == 0:
        command.append("--allow-root")  # JupyterLab refuses to start as root otherwise
    say("starting JupyterLab; if no browser opens, use the http://127.0.0.1:8888/lab?token=... "
        "URL it prints below. Ctrl-C twice stops it.")
    say("$ " + " ".join(str(part) for part in command))
    process = subprocess.Popen([str(part) for part in command], cwd=ROOT, env=jupyter_environment())
    while True:
        try:
            return process.wait()
        except KeyboardInterrupt:
            continue  # JupyterLab handles Ctrl-C itself (it asks to confirm)


def test(pytest_args: list[str]) -> int:
    """Run pytest in .venv (tests/ and notebooks/, see pyproject) and return its exit code."""
    ensure_browser()
    env = dict(os.environ, BOKEH_RESOURCES="inline", PYTHONDONTWRITEBYTECODE="1")
    say("running the tests")
    return run([BIN / "python", "-m", "pytest", *pytest_args], cwd=ROOT, env=env)


def main(argv: list[str]) -> int:
    """Dispatch ``setup``, ``tour`` or ``test``; return the exit code."""
    if sys.version_info < (3, 11):
        sys.exit("[dev.py] biasbook needs Python 3.11 or newer")
    if not argv or argv[0] not in ("setup", "tour", "test"):
        print(__doc__.strip())
        return 2
    ensure_venv()
    if argv[0] == "tour":
        return tour()
    if argv[0] == "test":
        return test(argv[1:])
    register_notebook_filter()
    say(f"ready: {BIN / 'python'}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
