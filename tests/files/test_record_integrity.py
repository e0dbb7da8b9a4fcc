"""Record integrity: tampering, damaged files, newer schemas and interrupted saves."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap

import pytest

from fieldbudget.errors import DigestMismatch, OutputError, RecordError, SchemaVersionError
from fieldbudget.files import atomic
from fieldbudget.files.record import (
    load_record,
    make_record,
    save_record,
    serialise,
    verify_record,
)
from tests.report._budgets import mixed_budget, nmr_budget

STAMP = "2026-11-30T09:15:00Z"


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    """A saved record (Monte Carlo included) and its bytes."""
    path = tmp_path_factory.mktemp("rec") / "em3.json"
    rec = make_record(nmr_budget(), monte_carlo=300, seed=11, operator="R. Okafor", remarks="EM-3, 1.5 T",
                      procedure=("BFSL-NMR-01", "3"), created_utc=STAMP)
    save_record(rec, path)
    return path, path.read_bytes()


def _leaves(node, path=()):
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _leaves(v, (*path, k))
    elif isinstance(node, list) and node:
        for i, v in enumerate(node):
            yield from _leaves(v, (*path, i))
    else:
        yield path, node


def _set(doc, path, value):
    node = doc
    for p in path[:-1]:
        node = node[p]
    node[path[-1]] = value


def _span(doc, path) -> tuple[int, int]:
    """Byte span of the leaf at ``path`` in the file as fieldbudget writes it.

    Everything before a leaf is the same whatever the leaf holds (keys are sorted
    and nothing before it changes), so the leaf starts where a sentinel put in its
    place starts.
    """
    value = json.loads(json.dumps(doc))
    original = json.dumps(_get(doc, path), ensure_ascii=False)
    _set(value, path, "\x00SENTINEL\x00")
    text = json.dumps(value, indent=2, sort_keys=True, ensure_ascii=False)
    start = len(text[: text.index('"\\u0000SENTINEL')].encode("utf-8"))
    return start, start + len(original.encode("utf-8"))


def _get(doc, path):
    node = doc
    for p in path:
        node = node[p]
    return node


def _caught(path) -> bool:
    """True when loading refuses the file or verification fails."""
    try:
        return not verify_record(path).passed
    except RecordError:
        return True


def test_every_single_byte_change_to_a_content_field_is_caught(saved, tmp_path):
    _, data = saved
    doc = json.loads(data)
    leaves = list(_leaves(doc))
    assert len(leaves) > 80  # budget, results, settings, software, ... all included
    fields_checked = 0
    target = tmp_path / "tampered.json"
    for leaf_path, _ in leaves:
        start, end = _span(doc, leaf_path)
        value_bytes = data[start:end]
        assert value_bytes == json.dumps(_get(doc, leaf_path), ensure_ascii=False).encode("utf-8")
        # flip one bit of the first, middle and last byte of the field's text
        for pos in sorted({start, (start + end) // 2, end - 1}):
            flipped = bytearray(data)
            flipped[pos] ^= 0x01
            target.write_bytes(bytes(flipped))
            assert _caught(target), f"byte {pos} of field {'/'.join(map(str, leaf_path))} changed unnoticed"
        fields_checked += 1
    assert fields_checked == len(leaves)


def test_a_change_that_leaves_the_parsed_value_equal_is_still_caught(saved, tmp_path):
    """'1e-10' and '1E-10' parse to the same float: the file-form check catches it."""
    _, data = saved
    text = data.decode("utf-8")
    assert "e-10" in text
    edited = tmp_path / "same_value.json"
    edited.write_text(text.replace("e-10", "E-10", 1), encoding="utf-8")
    result = verify_record(edited)
    assert [c.name for c in result.failures] == ["file form"]


def test_load_refuses_tampering_with_digest_mismatch(saved, tmp_path):
    _, data = saved
    doc = json.loads(data)
    doc["operator"] = "someone else"
    p = tmp_path / "t.json"
    p.write_text(json.dumps(doc, indent=2, sort_keys=True), encoding="utf-8")
    with pytest.raises(DigestMismatch, match="does not match its SHA-256 digest"):
        load_record(p)
    result = verify_record(p)
    assert "digest" in [c.name for c in result.failures]


def _write(tmp_path, name, content: bytes):
    p = tmp_path / name
    p.write_bytes(content)
    return p


def test_newer_truncated_and_wrong_type_each_have_their_own_message(saved, tmp_path):
    _, data = saved
    doc = json.loads(data)

    newer = dict(doc, schema_version="2.0")
    p_newer = _write(tmp_path, "newer.json", json.dumps(newer).encode())
    with pytest.raises(SchemaVersionError) as e_newer:
        load_record(p_newer)

    p_trunc = _write(tmp_path, "trunc.json", data[: len(data) // 2])
    with pytest.raises(RecordError) as e_trunc:
        load_record(p_trunc)

    wrong = json.loads(data)
    wrong["results"]["gum"]["u"] = "0.1"
    p_wrong = _write(tmp_path, "wrong.json", json.dumps(wrong).encode())
    with pytest.raises(RecordError) as e_wrong:
        load_record(p_wrong)

    assert "written under record schema 2.0" in str(e_newer.value) and "reads schema 1.x only" in str(e_newer.value)
    assert "truncated" in str(e_trunc.value) and "ends before the JSON document does" in str(e_trunc.value)
    assert "at #/results/gum/u" in str(e_wrong.value) and "is not of type 'number'" in str(e_wrong.value)
    assert not isinstance(e_trunc.value, (SchemaVersionError, DigestMismatch))
    assert not isinstance(e_wrong.value, (SchemaVersionError, DigestMismatch))
    messages = {str(e_newer.value), str(e_trunc.value), str(e_wrong.value)}
    assert len(messages) == 3
    # refusing changes nothing on disk
    assert p_trunc.read_bytes() == data[: len(data) // 2]


@pytest.mark.parametrize("content, words", [
    (b"", "the file is empty"),
    (b"\xff\xfe{}", "is not UTF-8 text"),
    (b"[1, 2]", "holds a JSON list, not an object"),
    (b'{"schema_version": 1}', "no text 'schema_version'"),
    (b'{"schema_version": "one"}', "must be 'major.minor'"),
    (b'{"a": 1, "a": 2}', "duplicate key 'a'"),
    (b'{"schema_version": "1.0", "x": NaN}', "NaN is not a number in JSON"),
    (b'{"schema_version": "1.0", "kind": "fieldbudget record"} trailing', "is not valid JSON (line 1"),
])
def test_damaged_files_are_refused_with_a_clear_message(tmp_path, content, words):
    p = _write(tmp_path, "bad.json", content)
    with pytest.raises(RecordError) as err:
        load_record(p)
    assert words in str(err.value) and str(p) in str(err.value)
    assert p.read_bytes() == content


def test_missing_file_is_a_record_error(tmp_path):
    with pytest.raises(RecordError, match="no such record file"):
        load_record(tmp_path / "nowhere.json")


def test_newer_minor_version_with_extra_keys_loads_and_keeps_them(saved, tmp_path):
    path, _ = saved
    rec = load_record(path)
    doc = rec.to_dict()
    doc["schema_version"] = "1.7"
    doc["future_key"] = {"added": "in 1.7"}
    from fieldbudget.files.record import compute_digest

    doc["digest"] = compute_digest(doc)
    text = json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
    p = _write(tmp_path, "minor.json", text.encode())
    again = load_record(p)
    assert again.extra["future_key"]["added"] == "in 1.7"
    assert again.digest_ok() and verify_record(p).passed


def test_failed_write_part_way_leaves_the_old_file_byte_identical(saved, tmp_path, monkeypatch):
    _, data = saved
    target = tmp_path / "archive.json"
    target.write_bytes(data)
    new = make_record(mixed_budget(), created_utc=STAMP)

    real_fdopen = os.fdopen

    class HalfWriter:
        def __init__(self, fh):
            self.fh = fh

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.fh.close()
            return False

        def write(self, b):
            self.fh.write(b[: len(b) // 2])
            self.fh.flush()
            raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic.os, "fdopen", lambda fd, mode: HalfWriter(real_fdopen(fd, mode)))
    with pytest.raises(OutputError, match="No space left") as err:
        save_record(new, target)
    assert err.value.path == str(target)  # the path given, never the temporary file
    assert target.read_bytes() == data
    assert sorted(p.name for p in tmp_path.iterdir()) == ["archive.json"]  # the temporary file is gone


def test_failed_rename_leaves_the_old_file_byte_identical(saved, tmp_path, monkeypatch):
    _, data = saved
    target = tmp_path / "archive.json"
    target.write_bytes(data)

    def boom(src, dst):
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(atomic.os, "replace", boom)
    with pytest.raises(OutputError, match="Input/output error"):
        save_record(make_record(mixed_budget(), created_utc=STAMP), target)
    assert target.read_bytes() == data
    assert sorted(p.name for p in tmp_path.iterdir()) == ["archive.json"]
    assert load_record(target).operator == "R. Okafor"


def test_a_process_killed_in_the_middle_of_a_save_leaves_the_old_file_intact(saved, tmp_path):
    """A real SIGKILL half-way through writing the new record (POSIX only)."""
    if not hasattr(signal, "SIGKILL"):
        pytest.skip("needs SIGKILL (POSIX)")
    _, data = saved
    target = tmp_path / "archive.json"
    target.write_bytes(data)
    script = textwrap.dedent(f"""
        import os, signal
        from fieldbudget.files import atomic
        from fieldbudget.files.record import make_record, save_record
        from tests.report._budgets import mixed_budget
        rec = make_record(mixed_budget(), created_utc="{STAMP}")
        real = os.fdopen
        class Killer:
            def __init__(self, fh): self.fh = fh
            def __enter__(self): return self
            def __exit__(self, *e): return False
            def write(self, b):
                self.fh.write(b[: len(b) // 2]); self.fh.flush(); os.fsync(self.fh.fileno())
                os.kill(os.getpid(), signal.SIGKILL)
        atomic.os.fdopen = lambda fd, mode: Killer(real(fd, mode))
        save_record(rec, {str(target)!r})
    """)
    proc = subprocess.run([sys.executable, "-c", script], cwd=os.getcwd(), capture_output=True, timeout=120,
                          check=False)
    assert proc.returncode == -signal.SIGKILL, proc.stderr.decode()
    assert target.read_bytes() == data
    leftovers = [p for p in tmp_path.iterdir() if p.name != "archive.json"]
    assert leftovers and all(p.name.startswith(".archive.json.") for p in leftovers)  # half-written temp file
    assert load_record(target).digest_ok()


def test_saved_text_is_the_canonical_indented_form(saved):
    path, data = saved
    assert data.decode("utf-8") == serialise(load_record(path))
    assert data.endswith(b"\n")


def test_byte_changes_between_the_fields_are_caught_too(saved, tmp_path):
    """Whitespace, quotes, brackets and key names: the file-form check sees any byte that moved
    (a sample of every 53rd byte of the file)."""
    _, data = saved
    target = tmp_path / "tampered.json"
    for pos in range(0, len(data), 53):
        flipped = bytearray(data)
        flipped[pos] ^= 0x01
        target.write_bytes(bytes(flipped))
        assert _caught(target), f"byte {pos} ({data[pos:pos + 1]!r}) changed unnoticed"
