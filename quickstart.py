#!/usr/bin/env python3
"""Set up fieldbudget in ./.venv and run it.  Needs only Python 3.11+ and the package registries.

usage: python3 quickstart.py {lab,report,test} [pytest options]

    lab      write the demo budget, record and reports into demo-output/, then open JupyterLab on
             workspace/: your copies of the templates (the shipped ones are never edited), the examples
             and the demo output. Ctrl-C stops JupyterLab.
    report   only the headless demo: budget, record and reports into demo-output/
             (both replace the previous demo's files there: that folder is the demo's own)
    test     the whole test suite (what CI runs); as root it installs Debian's chromium for the
             browser tests first, and says so

Each command creates ./.venv when it is missing and (re)installs the project
into it when pyproject.toml has changed since the last install.  Afterwards
the command line is .venv/bin/fieldbudget (or run `source .venv/bin/activate`
once, then `fieldbudget ...`).
"""

from __future__ import annotations

import hashlib
import os
import shutil
import signal
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent
VENV = ROOT / ".venv"
BIN = VENV / ("Scripts" if os.name == "nt" else "bin")
PY = BIN / ("python.exe" if os.name == "nt" else "python")
WORKSPACE = ROOT / "workspace"
DEMO_OUT = ROOT / "demo-output"
FIRST_NOTEBOOK = "templates/nmr-reference-field.ipynb"
COMMANDS = ("lab", "report", "test")


def _run(cmd: list, **kw) -> int:
    print("+", " ".join(str(c) for c in cmd), flush=True)
    return subprocess.call([str(c) for c in cmd], cwd=kw.pop("cwd", ROOT), **kw)


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
    # an editable install leaves the kit's own sources uncompiled (pip compiles a wheel's); with
    # PYTHONDONTWRITEBYTECODE set, every command would compile them again at start-up
    _run([PY, "-m", "compileall", "-q", ROOT / "fieldbudget"])
    stamp.write_text(digest)


def ensure_chromium() -> None:
    """Debian's chromium for the browser tests (Playwright's own download does not work offline)."""
    if shutil.which("chromium") or Path("/usr/bin/chromium").exists():
        return
    if os.name != "posix" or os.geteuid() != 0 or not shutil.which("apt-get"):
        print("note: chromium not found and cannot be installed here; the browser tests will be skipped", flush=True)
        return
    print("Running as root without chromium: installing Debian's chromium package for the browser tests "
          "(apt-get install --no-install-recommends chromium, a few hundred MB).", flush=True)
    env = dict(os.environ, DEBIAN_FRONTEND="noninteractive")
    _run(["apt-get", "update", "-qq"], env=env)
    _run(["apt-get", "install", "-y", "-qq", "--no-install-recommends", "chromium"], env=env)


def prepare_workspace() -> Path:
    """workspace/ with copies of templates/ and examples/ (files already there are kept: they are the
    user's) and demo-output/ reachable from it.  The shipped folders are only read."""
    for name in ("templates", "examples"):
        src = ROOT / name
        for f in src.rglob("*"):
            if f.is_file() and ".ipynb_checkpoints" not in f.parts and "__pycache__" not in f.parts:
                dest = WORKSPACE / name / f.relative_to(src)
                if not dest.exists():
                    dest.parent.mkdir(parents=True, exist_ok=True)
                    shutil.copy2(f, dest)
    link = WORKSPACE / "demo-output"
    if not link.exists() and not link.is_symlink():
        try:
            link.symlink_to(Path("..") / DEMO_OUT.name, target_is_directory=True)
        except OSError:  # no symlinks here (e.g. Windows without the privilege): a copy instead
            shutil.copytree(DEMO_OUT, link)
    return WORKSPACE


def cmd_report() -> int:
    ensure_venv("jupyter")
    return _run([PY, "-m", "fieldbudget", "demo", "--out", DEMO_OUT.name, "--replace"])


def cmd_lab() -> int:
    rc = cmd_report()
    if rc != 0:
        return rc
    ws = prepare_workspace()
    args = [PY, "-m", "jupyterlab", f"--ServerApp.root_dir={ws}", "--ServerApp.answer_yes=True", FIRST_NOTEBOOK]
    if os.name == "posix" and os.geteuid() == 0:
        args.append("--allow-root")
    print(f"JupyterLab on {ws} (your copies of the templates, the examples, the demo output). Ctrl-C stops it.",
          flush=True)
    print("+", " ".join(str(a) for a in args), flush=True)
    proc = subprocess.Popen([str(a) for a in args], cwd=ws)
    try:
        return proc.wait()
    except KeyboardInterrupt:
        # JupyterLab got the same Ctrl-C and shuts down (answer_yes: no prompt); wait for it, quietly
        try:
            proc.wait(20)
        except (subprocess.TimeoutExpired, KeyboardInterrupt):
            proc.send_signal(signal.SIGTERM)
            proc.wait()
        print("\nJupyterLab stopped.", flush=True)
        return 0


def cmd_test(extra: list[str]) -> int:
    ensure_venv("jupyter,test")
    ensure_chromium()
    return _run([PY, "-m", "pytest", *extra])


def main(argv: list[str]) -> int:
    if argv and argv[0] in ("-h", "--help", "help"):
        print(__doc__)
        return 0
    if not argv or argv[0] not in COMMANDS:
        got = f" (got {argv[0]!r})" if argv else ""
        print(f"quickstart.py: the command must be one of {', '.join(COMMANDS)}{got}; see --help", file=sys.stderr)
        return 2
    if argv[0] == "lab":
        return cmd_lab()
    if argv[0] == "report":
        return cmd_report()
    return cmd_test(argv[1:])


if __name__ == "__main__":
    try:
        sys.exit(main(sys.argv[1:]))
    except KeyboardInterrupt:  # Ctrl-C during the installs: stop without a traceback
        print("\nstopped.", file=sys.stderr)
        sys.exit(130)
