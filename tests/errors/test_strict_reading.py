"""Strict JSON reading (fieldbudget._io) and the files a file names; atomic saves' error paths."""

from __future__ import annotations

import os

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget._io import MAX_DEPTH, allow_outside_files, parse_json, read_named_text
from fieldbudget.errors import BudgetFileError, OutputError
from fieldbudget.files import atomic


def test_duplicate_key_is_named_with_an_escaped_pointer():
    # RFC 6901: "~" -> "~0", "/" -> "~1" in a JSON pointer
    with pytest.raises(BudgetFileError) as e:
        parse_json('{"a/b": {"c~d": [{"k": 1, "k": 2}]}}', "f.json")
    assert e.value.pointer == "#/a~1b/c~0d/0" and "duplicate key 'k'" in e.value.reason


def test_depth_limit_boundary():
    ok = "[" * MAX_DEPTH + "]" * MAX_DEPTH
    assert parse_json(ok, "f.json") is not None
    with pytest.raises(BudgetFileError, match=f"nested {MAX_DEPTH + 1} levels deep"):
        parse_json("[" + ok + "]", "f.json")


def test_brackets_inside_strings_do_not_count():
    assert parse_json('{"a": "' + "[" * 500 + '\\"]"}', "f.json") == {"a": "[" * 500 + '"]'}


def test_bom_is_accepted():
    assert parse_json(b"\xef\xbb\xbf{\"a\": 1}", "f.json") == {"a": 1}


@settings(max_examples=50, deadline=None)
@given(st.recursive(st.none() | st.booleans() | st.floats(allow_nan=False, allow_infinity=False) | st.text(),
                    lambda kids: st.lists(kids, max_size=4) | st.dictionaries(st.text(max_size=5), kids, max_size=4),
                    max_leaves=20))
def test_valid_json_reads_as_the_standard_library_reads_it(doc):
    import json

    text = json.dumps(doc)
    assert parse_json(text, "f.json") == json.loads(text)


def test_named_file_must_stay_in_the_folder(tmp_path):
    inner = tmp_path / "m"
    inner.mkdir()
    (tmp_path / "outside.csv").write_text("f\n1\n")
    (inner / "link.csv").symlink_to(tmp_path / "outside.csv")
    for name in ("../outside.csv", str(tmp_path / "outside.csv"), "link.csv"):
        with pytest.raises(BudgetFileError, match="lies outside the folder"):
            read_named_text(name, inner, "m/x.json", "#/p")
    with allow_outside_files():
        assert read_named_text("link.csv", inner, "m/x.json", "#/p")[0] == "f\n1\n"
    with pytest.raises(BudgetFileError, match="lies outside"):  # the permission ends with the block
        read_named_text("link.csv", inner, "m/x.json", "#/p")


def test_named_file_errors_never_show_its_contents(tmp_path):
    (tmp_path / "secret.csv").write_bytes(b"password=hunter2\n\xff")
    with pytest.raises(BudgetFileError) as e:
        read_named_text("secret.csv", tmp_path, "x.json", "#/p")
    assert "hunter2" not in str(e.value) and "not UTF-8" in str(e.value)


def test_atomic_save_syncs_the_folder_after_the_rename(tmp_path, monkeypatch):
    calls = []
    real_fsync, real_replace = os.fsync, os.replace

    def fsync(fd):
        calls.append(("fsync", os.path.isdir(f"/proc/self/fd/{fd}") if os.path.exists("/proc/self/fd") else None))
        return real_fsync(fd)

    def replace(a, b):
        calls.append(("replace", None))
        return real_replace(a, b)

    monkeypatch.setattr(atomic.os, "fsync", fsync)
    monkeypatch.setattr(atomic.os, "replace", replace)
    atomic.atomic_write_text(tmp_path / "a.json", "{}")
    assert [c[0] for c in calls] == ["fsync", "replace", "fsync"]  # file, rename, then the folder
    if calls[2][1] is not None:
        assert calls[2][1] is True and calls[0][1] is False


def test_atomic_save_removes_the_temporary_file_when_chmod_fails(tmp_path, monkeypatch):
    def boom(*a):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(atomic.os, "chmod", boom)
    with pytest.raises(OutputError, match="permission denied") as e:
        atomic.atomic_write_text(tmp_path / "a.json", "{}")
    assert e.value.path == str(tmp_path / "a.json")
    assert list(tmp_path.iterdir()) == []


def test_atomic_save_into_an_unwritable_folder_names_the_given_path(tmp_path, monkeypatch):
    # the temporary file cannot be made (as in a read-only folder; simulated, since root may write anywhere)
    def refuse(*a, **k):
        raise PermissionError(13, "Permission denied", str(tmp_path / ".a.json.x.tmp"))

    monkeypatch.setattr(atomic.tempfile, "mkstemp", refuse)
    with pytest.raises(OutputError) as e:
        atomic.atomic_write_text(tmp_path / "a.json", "{}")
    assert e.value.path == str(tmp_path / "a.json") and ".tmp" not in str(e.value)
    assert "permission denied" in str(e.value)
