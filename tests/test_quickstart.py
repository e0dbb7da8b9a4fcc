"""quickstart.py as a new user meets it: --help, a wrong command, the workspace, chromium as root."""

from __future__ import annotations

import importlib.util
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture
def qs(tmp_path, monkeypatch):
    spec = importlib.util.spec_from_file_location("quickstart_under_test", ROOT / "quickstart.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    monkeypatch.setattr(mod, "WORKSPACE", tmp_path / "workspace")
    monkeypatch.setattr(mod, "DEMO_OUT", tmp_path / "demo-output")
    return mod


def test_help_exits_0_and_names_the_commands():
    out = subprocess.run([sys.executable, str(ROOT / "quickstart.py"), "--help"], capture_output=True, text=True)
    assert out.returncode == 0 and all(c in out.stdout for c in ("lab", "report", "test"))
    assert ".venv/bin/fieldbudget" in out.stdout


def test_a_wrong_command_is_one_line_and_exit_2():
    out = subprocess.run([sys.executable, str(ROOT / "quickstart.py"), "labb"], capture_output=True, text=True)
    assert out.returncode == 2 and out.stderr.count("\n") == 1 and "'labb'" in out.stderr
    assert "Traceback" not in out.stderr


def test_workspace_copies_templates_and_keeps_the_users_edits(qs, tmp_path):
    (tmp_path / "demo-output").mkdir()
    before = {p: p.read_bytes() for p in (ROOT / "templates").iterdir() if p.is_file()}
    ws = qs.prepare_workspace()
    nb = ws / "templates" / "nmr-reference-field.ipynb"
    assert nb.read_bytes() == (ROOT / "templates" / nb.name).read_bytes()
    assert (ws / "examples" / "data").is_dir() and (ws / "demo-output").exists()
    nb.write_text("edited by the lab")
    qs.prepare_workspace()                                     # a second start keeps the lab's copy
    assert nb.read_text() == "edited by the lab"
    assert {p: p.read_bytes() for p in before} == before        # the shipped templates are never written


def test_as_root_chromium_is_announced_and_installed_without_recommends(qs, monkeypatch, capsys):
    calls = []
    monkeypatch.setattr(qs.shutil, "which", lambda name: "/usr/bin/apt-get" if name == "apt-get" else None)
    monkeypatch.setattr(qs, "Path", lambda p: type("P", (), {"exists": lambda self: False})())
    monkeypatch.setattr(qs.os, "geteuid", lambda: 0)
    monkeypatch.setattr(qs, "_run", lambda cmd, **kw: calls.append(cmd) or 0)
    qs.ensure_chromium()
    said = capsys.readouterr().out
    assert "installing Debian's chromium" in said and calls, said
    install = calls[-1]
    assert install[:2] == ["apt-get", "install"] and "--no-install-recommends" in install and "chromium" in install
