"""The bad-input corpus: cases as data (``corpus/*.toml``), a runner, and the counts.

Each ``[[case]]`` gives ``id``, ``argv`` (without the program name), the
``files`` to create in an empty folder, optional ``env``, the ``expect``ed
start of the one-line message (after ``fieldbudget COMMAND: ``) and the exit
``status`` (2 unless stated).  A file is a text, ``{b64 = ...}`` for bytes,
``{dir = true}`` for a folder, ``{pieces = [[text, count], ...]}`` for a long
text made of repeated pieces, or ``{fixture = NAME, ...}`` built from one of
the valid fixtures below and then edited: ``set_json = [[pointer, json]]``,
``delete = [pointer]``, ``replace = [[old, new]]``, ``append``, ``truncate``.

``python -m tests.errors._corpus`` prints the counts: cases tried, refused
with one line, tracebacks, and silent results (exit 0 where a refusal was due).
"""

from __future__ import annotations

import base64
import contextlib
import copy
import io
import json
import os
import sys
import tomllib
import traceback
from dataclasses import dataclass
from functools import cache
from pathlib import Path

HERE = Path(__file__).parent
CORPUS = HERE / "corpus"
NMR_FILE = HERE.parent / "nmr" / "data" / "water_cylinder_1p5T.json"
PASSPHRASE = "corpus-pass"  # for the protected key fixture; invented

BUDGET = {
    "title": "Gain of amplifier AMP-7 (invented example)",
    "model": "a * b",
    "measurand": {"symbol": "G", "unit": "1"},
    "inputs": {
        "a": {"value": 2.0, "u": 0.01, "unit": "1", "source": "report BFSL-A-1 (invented)"},
        "b": {"value": 3.0, "half_width": 0.05, "distribution": "rectangular", "unit": "1"},
    },
}


@cache
def _fixture_bytes() -> dict[str, bytes]:
    """The valid files the cases start from (made once per process)."""
    import tempfile

    from fieldbudget.files.record import make_record, serialise
    from fieldbudget.files.signing import new_key

    out = {"budget": json.dumps(BUDGET, indent=2).encode(), "nmr": NMR_FILE.read_bytes(),
           "csv": b"f\n63871224.31\n63871224.35\n63871224.28\n"}
    rec = make_record(BUDGET, monte_carlo=2000, seed=7, operator="Corpus Operator", created_utc="2026-11-30T09:15:00Z")
    out["record"] = serialise(rec).encode()
    with tempfile.TemporaryDirectory() as d:
        new_key("Corpus Operator", "operator", Path(d) / "op.key")
        new_key("Corpus Approver", "approver", Path(d) / "ap.key", passphrase=PASSPHRASE)
        for name in ("op.key", "op.pub", "ap.key", "ap.pub"):
            out[name.replace(".", "_")] = (Path(d) / name).read_bytes()
    return out


def _pointer_parts(pointer: str) -> list[str]:
    return [p.replace("~1", "/").replace("~0", "~") for p in pointer.strip("/").split("/")] if pointer.strip("/") else []


def _edit(doc, spec: dict):
    for pointer, value in spec.get("set_json", []):
        parts = _pointer_parts(pointer)
        node = doc
        for p in parts[:-1]:
            node = node[int(p)] if isinstance(node, list) else node[p]
        last = parts[-1]
        if isinstance(node, list):
            node[int(last)] = json.loads(value)
        else:
            node[last] = json.loads(value)
    for pointer in spec.get("delete", []):
        parts = _pointer_parts(pointer)
        node = doc
        for p in parts[:-1]:
            node = node[int(p)] if isinstance(node, list) else node[p]
        del node[int(parts[-1]) if isinstance(node, list) else parts[-1]]
    return doc


def file_bytes(spec) -> bytes | None:
    """The bytes of one file of a case (None for a folder)."""
    if isinstance(spec, str):
        return spec.encode("utf-8")
    if spec.get("dir"):
        return None
    if "b64" in spec:
        return base64.b64decode(spec["b64"])
    if "pieces" in spec:
        return "".join(text * int(count) for text, count in spec["pieces"]).encode("utf-8")
    data = _fixture_bytes()[spec["fixture"]]
    if spec.get("set_json") or spec.get("delete"):
        doc = _edit(copy.deepcopy(json.loads(data)), spec)
        data = (json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n").encode()
    for old, new in spec.get("replace", []):
        data = data.replace(old.encode(), new.encode(), 1)
    if "append" in spec:
        data += spec["append"].encode()
    if "truncate" in spec:
        data = data[: spec["truncate"]]
    return data


@dataclass(frozen=True)
class Case:
    id: str
    argv: tuple
    files: dict
    expect: str
    status: int = 2
    env: dict | None = None
    source: str = ""


def load_cases() -> list[Case]:
    cases = []
    for path in sorted(CORPUS.glob("*.toml")):
        data = tomllib.loads(path.read_text("utf-8"))
        for c in data.get("case", []):
            cases.append(Case(c["id"], tuple(c["argv"]), dict(c.get("files", {})), c.get("expect", ""),
                              int(c.get("status", 2)), c.get("env"), path.name))
    return cases


@dataclass(frozen=True)
class Outcome:
    status: int | None
    stdout: str
    stderr: str
    traceback: str = ""
    changed: tuple = ()


def make_files(case: Case, folder: Path) -> dict[str, bytes | None]:
    made = {}
    for name, spec in case.files.items():
        p = folder / name
        p.parent.mkdir(parents=True, exist_ok=True)
        data = file_bytes(spec)
        if data is None:
            p.mkdir(exist_ok=True)
        else:
            p.write_bytes(data)
            if name.endswith(".key"):
                p.chmod(0o600)
        made[name] = data
    return made


def run_case(case: Case, folder: Path) -> Outcome:
    """Run one case in-process in ``folder`` (made empty by the caller)."""
    from fieldbudget.cli import main

    made = make_files(case, folder)
    old_cwd, old_env = os.getcwd(), dict(os.environ)
    out, err = io.StringIO(), io.StringIO()
    tb = ""
    status = None
    try:
        os.chdir(folder)
        os.environ.update(case.env or {})
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            status = main(list(case.argv))
    except BaseException:  # noqa: BLE001 - a traceback is what the corpus counts
        tb = traceback.format_exc()
    finally:
        os.chdir(old_cwd)
        os.environ.clear()
        os.environ.update(old_env)
    changed = tuple(n for n, data in made.items() if data is not None and (folder / n).read_bytes() != data
                    and case.argv[:1] != ("sign",))
    return Outcome(status, out.getvalue(), err.getvalue(), tb, changed)


def verdict(case: Case, o: Outcome) -> str:
    """'ok', 'traceback', 'silent' (exit 0 where a refusal was due) or 'wrong' (anything else off)."""
    if o.traceback:
        return "traceback"
    if o.status == 0 and case.status != 0:
        return "silent"
    if o.status != case.status or o.changed:
        return "wrong"
    if case.status == 0:
        return "ok"
    lines = o.stderr.splitlines()
    if len(lines) != 1 or not lines[0].startswith("fieldbudget") or ": " not in lines[0]:
        return "wrong"
    return "ok" if message_of(lines[0]).startswith(case.expect) else "wrong"


def message_of(line: str) -> str:
    """The message after ``fieldbudget COMMAND: `` (the command may be two words, ``key new``)."""
    return line.split(": ", 1)[1]


def main() -> int:
    import tempfile

    cases = load_cases()
    counts = {"ok": 0, "traceback": 0, "silent": 0, "wrong": 0}
    for case in cases:
        with tempfile.TemporaryDirectory() as d:
            v = verdict(case, run_case(case, Path(d)))
        counts[v] += 1
        if v != "ok":
            print(f"{v}: {case.source} {case.id}")
    print(f"cases tried: {len(cases)}; refused with one line and the expected message: {counts['ok']}; "
          f"tracebacks: {counts['traceback']}; silent wrong results: {counts['silent']}; other mismatches: "
          f"{counts['wrong']}")
    return 0 if counts["ok"] == len(cases) else 1


if __name__ == "__main__":
    sys.exit(main())
