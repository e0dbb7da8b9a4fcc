"""The archive: read-only copies, SQLite index, hash chain, check, and two writers at once."""

from __future__ import annotations

import hashlib
import json
import os
import sqlite3
import stat
import subprocess
import sys
import textwrap

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fieldbudget.cli import main
from fieldbudget.engine import Budget, InputQuantity, Measurand
from fieldbudget.errors import InputError, RecordError
from fieldbudget.files.record import make_record, save_record
from fieldbudget.lab.archive import GENESIS, Archive, chain_link

from .conftest import EXAMPLE_LAB, ROOT, make_writable


def _record(path, value, operator="A. Tester (invented)", item="check standard DEMO-CS1"):
    budget = Budget(model="x + d", measurand=Measurand("B", "T"),
                    inputs=(InputQuantity.normal("x", value, 1e-6, unit="T"),
                            InputQuantity.normal("d", 0.0, 2e-6, unit="T")),
                    metadata={"measurement_metadata": {"date": f"2026-0{1 + int(value * 10) % 9}-15", "item": item,
                                                       "instruments": ["CS-1"]}})
    return save_record(make_record(budget, operator=operator, created_utc="2026-11-30T10:00:00Z"), path)


@pytest.fixture
def filled(tmp_path):
    lab = tmp_path / "lab"
    lab.mkdir()
    archive = Archive(lab)
    for i in range(5):
        archive.add(_record(tmp_path / f"r{i}.json", 0.1 * (i + 1)), added_by="tester")
    return archive


def test_added_records_are_read_only_copies_chained_in_order(filled, tmp_path):
    entries = filled.entries()
    assert [e.seq for e in entries] == [1, 2, 3, 4, 5]
    prev = GENESIS
    for e in entries:
        path = filled.path_of(e)
        data = path.read_bytes()
        assert hashlib.sha256(data).hexdigest() == e.file_sha256
        # the link, recomputed here from its definition
        text = f"fieldbudget-archive/1\n{e.seq}\n{prev}\n{e.record_digest}\n{e.file_sha256}"
        assert e.link == hashlib.sha256(text.encode()).hexdigest() == chain_link(e.seq, prev, e.record_digest,
                                                                                  e.file_sha256)
        assert not path.stat().st_mode & (stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH)
        prev = e.link
    check = filled.check()
    assert check.intact and check.entries == 5 and check.head == entries[-1].link and not check.notes
    assert (tmp_path / "r0.json").exists()           # the source is left where it was


def test_find_by_measurand_instrument_operator_and_dates(filled, tmp_path):
    filled.add(_record(tmp_path / "x.json", 0.65, operator="B. Other (invented)", item="magnet DEMO-M2"))
    assert len(filled.find(measurand="B")) == 6 and filled.find(measurand="B0") == ()
    assert [e.operator for e in filled.find(operator="other")] == ["B. Other (invented)"]
    assert len(filled.find(instrument="CS-1")) == 6 and filled.find(instrument="CS") == ()
    assert [e.item for e in filled.find(item="DEMO-M2")] == ["magnet DEMO-M2"]
    dates = [e.measured for e in filled.find(date_from="2026-03-01", date_to="2026-05-31")]
    assert dates and all("2026-03-01" <= d <= "2026-05-31" for d in dates)
    with pytest.raises(InputError, match="--from"):
        filled.find(date_from="March")


def test_a_record_is_archived_once_and_a_bad_record_is_refused(filled, tmp_path):
    with pytest.raises(InputError, match="entry 1"):
        filled.add(tmp_path / "r0.json")
    bad = tmp_path / "bad.json"
    doc = json.loads((tmp_path / "r1.json").read_text())
    doc["operator"] = "someone else"
    bad.write_text(json.dumps(doc))
    with pytest.raises(RecordError, match="digest"):
        filled.add(bad)
    assert filled.check().intact and len(filled.entries()) == 5


def _kinds(check):
    return {(p.kind, p.seq) for p in check.problems}


def test_a_changed_record_breaks_the_chain(filled):
    e = filled.entries()[2]
    path = filled.path_of(e)
    make_writable(path)
    doc = json.loads(path.read_text())
    doc["remarks"] = "edited afterwards"
    path.write_text(json.dumps(doc, indent=2, sort_keys=True) + "\n")
    check = filled.check()
    assert not check.intact and ("changed", 3) in _kinds(check)


def test_a_removed_record_breaks_the_chain(filled):
    e = filled.entries()[1]
    make_writable(filled.path_of(e))
    filled.path_of(e).unlink()
    assert ("removed", 2) in _kinds(filled.check())


def test_a_removed_index_row_breaks_the_chain(filled):
    con = sqlite3.connect(filled.index_path)
    con.execute("DELETE FROM entries WHERE seq = 3")
    con.commit()
    con.close()
    kinds = _kinds(filled.check())
    assert ("removed", 3) in kinds           # the gap in the numbering, the log's entry without a row


def test_reordered_records_break_the_chain(filled):
    a, b = filled.entries()[1], filled.entries()[3]
    pa, pb = filled.path_of(a), filled.path_of(b)
    make_writable(pa)
    make_writable(pb)
    tmp = pa.with_suffix(".swap")
    pa.rename(tmp)
    pb.rename(pa)
    tmp.rename(pb)
    kinds = _kinds(filled.check())
    assert ("reordered", 2) in kinds and ("reordered", 4) in kinds


def test_reordered_index_rows_break_the_chain(filled):
    con = sqlite3.connect(filled.index_path)
    con.execute("UPDATE entries SET seq = -1 WHERE seq = 2")
    con.execute("UPDATE entries SET seq = 2 WHERE seq = 3")
    con.execute("UPDATE entries SET seq = 3 WHERE seq = -1")
    con.commit()
    con.close()
    check = filled.check()
    assert not check.intact and any(p.kind == "reordered" for p in check.problems)


def test_a_file_nobody_added_and_a_rewritten_log_are_found(filled):
    (filled.records_dir / "000099-extra.record.json").write_text("{}")
    lines = filled.log_path.read_text().splitlines()
    filled.log_path.write_text("\n".join([lines[1], lines[0], *lines[2:]]) + "\n")
    kinds = {p.kind for p in filled.check().problems}
    assert {"unindexed", "reordered"} <= kinds


def test_a_head_noted_earlier_must_still_be_there(filled):
    head = filled.check().head
    assert filled.check(head=head).intact
    # cut the last entry off everywhere: only the noted head shows it
    last = filled.entries()[-1]
    con = sqlite3.connect(filled.index_path)
    con.execute("DELETE FROM entries WHERE seq = ?", (last.seq,))
    con.commit()
    con.close()
    make_writable(filled.path_of(last))
    filled.path_of(last).unlink()
    lines = filled.log_path.read_text().splitlines()
    filled.log_path.write_text("\n".join(lines[:-1]) + "\n")
    assert filled.check().intact
    assert not filled.check(head=head).intact


WRITER = textwrap.dedent("""
    import sys, time
    from fieldbudget.lab.archive import Archive
    lab, start, files = sys.argv[1], float(sys.argv[2]), sys.argv[3:]
    while time.time() < start:
        time.sleep(0.001)
    archive = Archive(lab)
    for f in files:
        archive.add(f, added_by=sys.argv[3])
""")


def test_two_writers_at_once_lose_nothing(tmp_path):
    import time

    lab = tmp_path / "lab"
    lab.mkdir()
    a = [str(_record(tmp_path / f"a{i}.json", 1.0 + i * 1e-3, operator="A")) for i in range(40)]
    b = [str(_record(tmp_path / f"b{i}.json", 2.0 + i * 1e-3, operator="B")) for i in range(40)]
    start = time.time() + 1.5  # both processes start adding at the same moment
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    procs = [subprocess.Popen([sys.executable, "-c", WRITER, str(lab), str(start), *files], env=env,
                              stderr=subprocess.PIPE, text=True) for files in (a, b)]
    for p in procs:
        _, err = p.communicate(timeout=120)
        assert p.returncode == 0, err
    archive = Archive(lab)
    entries = archive.entries()
    assert [e.seq for e in entries] == list(range(1, 81))
    assert sorted(e.operator for e in entries) == ["A"] * 40 + ["B"] * 40
    assert len(list(archive.records_dir.iterdir())) == 80
    assert archive.check().intact


def test_archive_commands_on_the_example_lab(capsys, lab_copy, monkeypatch):
    monkeypatch.setenv("FIELDBUDGET_LAB", str(lab_copy))
    assert main(["archive", "check"]) == 0
    out = capsys.readouterr().out
    assert "50 entries" in out and "archive intact" in out
    assert main(["archive", "list", "--json"]) == 0
    entries = json.loads(capsys.readouterr().out)
    assert len(entries) == 50 and entries[0]["instruments"] == ["CM-1", "FC-9", "PX-3", "TH-7"]
    assert main(["archive", "find", "--instrument", "PX-4", "--json"]) == 0
    (px4,) = json.loads(capsys.readouterr().out)
    assert px4["measured"] == "2026-07-21"
    assert main(["archive", "find", "--measurand", "B0", "--from", "2026-01-01", "--to", "2026-03-31"]) == 0
    out = capsys.readouterr().out
    assert "2026-01-13" in out and "2025-12-09" not in out
    assert main(["archive", "find", "--operator", "Lindqvist", "--json"]) == 0
    assert len(json.loads(capsys.readouterr().out)) == 24   # 12 months, two probes each
    # the example is not touched by reading it
    before = (EXAMPLE_LAB / "archive" / "index.sqlite").read_bytes()
    assert main(["archive", "list", "--lab", str(EXAMPLE_LAB)]) == 0
    assert "check magnet DEMO-CM1" in capsys.readouterr().out
    assert (EXAMPLE_LAB / "archive" / "index.sqlite").read_bytes() == before
    # a changed record: exit 1
    victim = sorted((lab_copy / "archive" / "records").iterdir())[4]
    make_writable(victim)
    victim.write_text(victim.read_text().replace('"remarks": ""', '"remarks": "x"'))
    assert main(["archive", "check", "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert doc["intact"] is False and doc["problems"][0]["seq"] == 5


def test_archive_add_command_and_its_errors(capsys, tmp_path):
    lab = tmp_path / "lab"
    lab.mkdir()
    r = _record(tmp_path / "r.json", 0.5)
    assert main(["archive", "add", str(r), "--lab", str(lab), "--by", "tester"]) == 0
    assert "entry 1" in capsys.readouterr().out
    for argv, words in ((["archive", "add", str(r), "--lab", str(lab)], "entry 1"),
                        (["archive", "add", str(tmp_path / "none.json"), "--lab", str(lab)], "no such record"),
                        (["archive", "list", "--lab", str(tmp_path / "missing")], "--lab"),
                        (["archive", "find", "--from", "x", "--lab", str(lab)], "--from")):
        assert main(argv) == 2
        err = capsys.readouterr().err
        assert words in err and len(err.strip().splitlines()) == 1, err


def test_check_can_re_evaluate_every_record(filled):
    assert filled.check(recompute=True).intact
    # a record whose recorded result no longer follows from its inputs, with a matching digest
    from dataclasses import replace

    from fieldbudget.files.record import load_record, save_record

    e = filled.entries()[0]
    rec = load_record(filled.path_of(e))
    gum = dict(rec.gum)
    gum["U"] = gum["U"] * 0.5
    forged = replace(rec, gum=gum)
    forged = replace(forged, digest=forged.computed_digest())
    src = filled.folder.parent / "forged.json"
    save_record(forged, src)
    entry = filled.add(src)
    found = filled.check(recompute=True)
    assert [(p.kind, p.seq) for p in found.problems] == [("recomputed", entry.seq)]
    assert filled.check().intact          # the chain alone cannot see it: it was added like that


def test_a_damaged_index_is_one_line_and_a_failed_check(capsys, tmp_path):
    lab = tmp_path / "lab"
    (lab / "archive").mkdir(parents=True)
    (lab / "archive" / "index.sqlite").write_text("not a database")
    r = _record(tmp_path / "r.json", 0.5)
    for argv in (["archive", "list"], ["archive", "add", str(r)]):
        assert main([*argv, "--lab", str(lab)]) == 2
        err = capsys.readouterr().err
        assert "index" in err and len(err.strip().splitlines()) == 1
    assert main(["archive", "check", "--lab", str(lab)]) == 1
    assert "cannot be read" in capsys.readouterr().out


@pytest.fixture(scope="module")
def small_archive(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("prop")
    archive = Archive(tmp / "lab")
    for i in range(3):
        archive.add(_record(tmp / f"p{i}.json", 0.2 * (i + 1)))
    return archive


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(which=st.integers(0, 2), where=st.floats(0, 1, exclude_max=True), delta=st.integers(1, 255))
def test_any_changed_byte_of_any_archived_record_is_found(small_archive, which, where, delta):
    e = small_archive.entries()[which]
    path = small_archive.path_of(e)
    data = path.read_bytes()
    i = int(where * len(data))
    changed = data[:i] + bytes([(data[i] + delta) % 256]) + data[i + 1:]
    make_writable(path)
    try:
        path.write_bytes(changed)
        check = small_archive.check()
        assert not check.intact and any(p.seq == e.seq for p in check.problems)
    finally:
        path.write_bytes(data)
        os.chmod(path, stat.S_IRUSR | stat.S_IRGRP | stat.S_IROTH)
    assert small_archive.check().intact
