"""The bad-input corpus (tests/errors/corpus/*.toml): every case ends in one line and its exit status.

A refusal is exactly one line on stderr that starts with ``fieldbudget COMMAND: `` and the
case's expected message, exit status 2, no traceback, and every file the case made left as it
was.  The few cases with status 0 are valid inputs next to the bad ones (a tiny relative
uncertainty, a CSV in a subfolder) that must keep working.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from tests.errors._corpus import load_cases, make_files, message_of, run_case, verdict

CASES = load_cases()


def test_the_corpus_is_large_enough():
    bad = [c for c in CASES if c.status == 2]
    assert len(bad) >= 250
    assert len({(c.source, c.id) for c in CASES}) == len(CASES)  # ids are unique per file
    assert all(c.expect for c in bad)


@pytest.mark.parametrize("case", CASES, ids=[f"{c.source[:-5]}/{c.id}" for c in CASES])
def test_case(case, tmp_path):
    outcome = run_case(case, tmp_path)
    assert not outcome.traceback, outcome.traceback
    assert outcome.status == case.status, (outcome.status, outcome.stderr, outcome.stdout[:300])
    assert not outcome.changed, f"the command changed its input files {outcome.changed}"
    if case.status != 0:
        lines = outcome.stderr.splitlines()
        assert len(lines) == 1, outcome.stderr
        assert "Traceback" not in outcome.stderr
        assert message_of(lines[0]).startswith(case.expect), lines[0]
    assert verdict(case, outcome) == "ok"


# A handful through a real process: the console entry point, exit status and stderr as a shell sees them.
SUBPROCESS = ["dup-inputs", "dof-true", "parentheses-100000", "negative-frequency", "csv-outside-parent",
              "output-exists-record", "truncated", "key-new-bad-role"]


@pytest.mark.parametrize("case", [c for c in CASES if c.id in SUBPROCESS], ids=lambda c: c.id)
def test_case_in_a_subprocess(case, tmp_path):
    make_files(case, tmp_path)
    proc = subprocess.run([sys.executable, "-m", "fieldbudget", *case.argv], cwd=tmp_path, capture_output=True,
                          text=True, timeout=120, env={"PATH": "/usr/bin:/bin", "PYTHONPATH": str(Path.cwd())})
    assert proc.returncode == case.status, proc.stderr
    lines = proc.stderr.splitlines()
    assert len(lines) == 1 and message_of(lines[0]).startswith(case.expect), proc.stderr
