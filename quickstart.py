#!/usr/bin/env python3
"""Set up fieldbudget in ./.venv and run it.  Needs only Python 3.11+ and the package registries.

    python3 quickstart.py lab      # demo report written headless, then JupyterLab on the demo procedure
    python3 quickstart.py report   # only the headless demo: budget, record and reports into demo-output/
    python3 quickstart.py test     # the whole test suite (what CI runs)

Each command creates ./.venv when it is missing and (re)installs the project
into it when pyproject.toml has changed since the last install.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent
VENV = ROOT / ".venv"
BIN = VENV / ("Scripts" if os.name == "nt" else "bin")
PY = BIN / ("python.exe" if os.name == "nt" else "python")
DEMO_NOTEBOOK = "templates/nmr-reference-field.ipynb"


def _run(cmd: list[str], **kw) -> int:
    print("+", " ".join(str(c) for c in cmd), flush=True)
    return subprocess.call([str(c) for c in cmd], cwd=ROOT, **kw)


def ensure_venv(extras: str) -> None:
    if sys.version_info < (3, 11):
        sys.exit(f"fieldbudget needs Python 3.11 or newer (this is {sys.version.split()[0]})")
    if not PY.exists():
        if _run([sys.executable, "-m", "venv", VENV]) != 0:
            sys.exit("could not create .venv (on Debian/Ubuntu: apt-get install python3-venv)")
        _run([PY, "-m", "pip", "install", "--quiet", "--upgrade", "pip"])
    stamp = VENV / f".installed-{extras.replace(',', '-')}"
    digest = hashlib.sha256((ROOT / "pyproject.toml").read_bytes()).hexdigest()
    if stamp.exists() and stamp.read_text() == digest:
        return
    if _run([PY, "-m", "pip", "install", "--quiet", "-e", f".[{extras}]"]) != 0:
        sys.exit("pip install failed")
    stamp.write_text(digest)


def ensure_chromium() -> None:
    """Debian's chromium for the browser tests (Playwright's own download does not work offline)."""
    if shutil.which("chromium") or Path("/usr/bin/chromium").exists():
        return
    if os.name != "posix" or os.geteuid() != 0 or not shutil.which("apt-get"):
        print("note: chromium not found and cannot be installed here; the browser tests will be skipped", flush=True)
        return
    env = dict(os.environ, DEBIAN_FRONTEND="noninteractive")
    _run(["apt-get", "update", "-qq"], env=env)
    _run(["apt-get", "install", "-y", "-qq", "chromium"], env=env)


def cmd_report() -> int:
    ensure_venv("jupyter")
    return _run([PY, "-m", "fieldbudget", "demo", "--out", "demo-output"])


def cmd_lab() -> int:
    rc = cmd_report()
    if rc != 0:
        return rc
    args = [PY, "-m", "jupyterlab", DEMO_NOTEBOOK]
    if os.name == "posix" and os.geteuid() == 0:
        args.append("--allow-root")
    return _run(args)


def cmd_test(extra: list[str]) -> int:
    ensure_venv("jupyter,test")
    ensure_chromium()
    return _run([PY, "-m", "pytest", *extra])


def main(argv: list[str]) -> int:
    if not argv or argv[0] not in {"lab", "report", "test"}:
        print(__doc__)
        return 2
    if argv[0] == "lab":
        return cmd_lab()
    if argv[0] == "report":
        return cmd_report()
    return cmd_test(argv[1:])


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
