"""Fixtures for the real-browser tests: a JupyterLab (or Voila) server on 127.0.0.1 with a random
token and its own Jupyter folders, serving copies of the notebooks, and Debian's chromium driven by
Playwright.  Servers are stopped by their own process id whatever happens.

Without chromium the tests are skipped with the reason, unless FIELDBUDGET_REQUIRE_BROWSER=1, which
turns the skip into a failure (CI sets it).
"""

from __future__ import annotations

import json
import os
import secrets
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

import pytest

CHROMIUM = os.environ.get("FIELDBUDGET_CHROMIUM", "/usr/bin/chromium")
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]
ROOT = Path(__file__).resolve().parents[2]
ARTIFACTS = Path(__file__).parent / "artifacts"


def _missing(reason: str) -> None:
    if os.environ.get("FIELDBUDGET_REQUIRE_BROWSER") == "1":
        pytest.fail(f"{reason} (FIELDBUDGET_REQUIRE_BROWSER=1)")
    pytest.skip(reason)


@pytest.fixture(scope="session")
def chromium() -> str:
    if not (os.path.isfile(CHROMIUM) and os.access(CHROMIUM, os.X_OK)):
        _missing(f"no chromium at {CHROMIUM}; install it with 'apt-get install -y chromium'")
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        _missing("the playwright Python package is not installed")
    return CHROMIUM


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def isolated_env(home: Path) -> dict:
    env = dict(os.environ)
    for key, sub in [("JUPYTER_CONFIG_DIR", "config"), ("JUPYTER_DATA_DIR", "data"),
                     ("JUPYTER_RUNTIME_DIR", "runtime"), ("JUPYTERLAB_SETTINGS_DIR", "lab-settings"),
                     ("JUPYTERLAB_WORKSPACES_DIR", "lab-workspaces"), ("IPYTHONDIR", "ipython")]:
        env[key] = str(home / sub)
    # no "get notified about Jupyter news?" toast over the notebook
    f = home / "lab-settings/@jupyterlab/apputils-extension/notification.jupyterlab-settings"
    f.parent.mkdir(parents=True, exist_ok=True)
    f.write_text(json.dumps({"fetchNews": "false", "checkForUpdates": False}))
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT), env.get("PYTHONPATH", "")]).rstrip(os.pathsep)
    return env


def _stop(proc: subprocess.Popen) -> None:
    if proc.poll() is None:
        proc.terminate()  # by its own pid; the server shuts its kernels down
        try:
            proc.wait(20)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait()


def _wait_port(port: int, proc: subprocess.Popen, log: Path, timeout: float = 60) -> None:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if proc.poll() is not None:
            raise RuntimeError(f"server exited early:\n{log.read_text()[-3000:]}")
        try:
            with socket.create_connection(("127.0.0.1", port), timeout=1):
                return
        except OSError:
            time.sleep(0.2)
    raise RuntimeError(f"server not listening after {timeout} s:\n{log.read_text()[-3000:]}")


@pytest.fixture(scope="session")
def served(tmp_path_factory) -> Path:
    """A temporary copy of templates/ and examples/ (the repository is never written)."""
    base = tmp_path_factory.mktemp("served")
    for name in ("templates", "examples"):
        src = ROOT / name
        if src.is_dir():
            shutil.copytree(src, base / name, ignore=shutil.ignore_patterns(".ipynb_checkpoints", "__pycache__"))
    return base


@pytest.fixture(scope="session")
def jupyter_lab(chromium, served, tmp_path_factory):
    home = tmp_path_factory.mktemp("jhome")
    port, token = free_port(), secrets.token_hex(16)
    cmd = [sys.executable, "-m", "jupyterlab", "--no-browser", "--allow-root", "--ip=127.0.0.1",
           f"--port={port}", f"--IdentityProvider.token={token}", f"--ServerApp.root_dir={served}",
           "--LabApp.news_url=None",
           "--LabApp.check_for_updates_class=jupyterlab.handlers.announcements.NeverCheckForUpdate"]
    log_path = home / "lab.log"
    with open(log_path, "w") as log:
        proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, env=isolated_env(home), cwd=served)
        try:
            url = f"http://127.0.0.1:{port}/api/status?token={token}"
            end = time.monotonic() + 90
            while True:
                try:
                    urllib.request.urlopen(url, timeout=2)
                    break
                except OSError:
                    if proc.poll() is not None or time.monotonic() > end:
                        raise RuntimeError(f"JupyterLab did not start:\n{log_path.read_text()[-3000:]}") from None
                    time.sleep(0.25)
            yield {"base": f"http://127.0.0.1:{port}", "token": token, "dir": served, "log": log_path}
        finally:
            _stop(proc)


@pytest.fixture
def voila(chromium, served, tmp_path_factory):
    """Start Voila on one notebook: ``url = voila(path)``; stopped at the end of the test."""
    procs = []

    def start(notebook: Path) -> str:
        home = tmp_path_factory.mktemp("vhome")
        port, token = free_port(), secrets.token_hex(16)
        cmd = [sys.executable, "-m", "voila", "--no-browser", "--Voila.ip=127.0.0.1", f"--port={port}",
               f"--token={token}", "--VoilaConfiguration.show_tracebacks=True", str(notebook)]
        log_path = home / "voila.log"
        log = open(log_path, "w")  # noqa: SIM115 - closed after the server stops, at teardown
        proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, env=isolated_env(home),
                                cwd=notebook.parent)
        procs.append((proc, log, log_path))
        _wait_port(port, proc, log_path)
        return f"http://127.0.0.1:{port}/?token={token}"

    try:
        yield start
    finally:
        for proc, log, log_path in procs:
            _stop(proc)
            log.close()
            # pytest shows a fixture's teardown output only when the test failed: the server's side of it
            print(f"--- end of {log_path} ---\n" + log_path.read_text(errors="replace")[-3000:])


@pytest.fixture(scope="module")  # closed per module: a live sync_playwright blocks later ones in the session
def browser_context(chromium):
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p, tempfile.TemporaryDirectory() as profile:
        ctx = p.chromium.launch_persistent_context(profile, executable_path=chromium, headless=True, args=ARGS,
                                                   viewport={"width": 1280, "height": 800})
        try:
            yield ctx
        finally:
            ctx.close()


@pytest.fixture
def artifact_dir() -> Path:
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS
