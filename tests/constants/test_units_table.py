"""units-table.json: the kept pint answers for common spellings.

The table exists only so that commands start without building pint's
registry; every entry must be what pint itself computes (pint is the
reference library here), and a spelling outside the table must give the same
answer through pint.  Factors checked by hand come from the SI Brochure, 9th
ed. (BIPM 2019), Table 7 (prefixes); 1 G = 1e-4 T as in the units boundary's
tests; degC as a temperature difference has the scale of the kelvin (SI
Brochure, 9th ed., 2.3.1).
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from fieldbudget import units
from fieldbudget.units import TABLE_SPELLINGS, _parse_with_pint, _table, _table_key, parse_unit


def test_the_shipped_table_is_what_pint_computes_now():
    shipped = json.loads(units._TABLE_FILE.read_text(encoding="utf-8"))
    assert shipped["units"] == units.table_from_pint()["units"], \
        "units-table.json is out of date: run `python -m fieldbudget.units --write-table`"


@pytest.mark.parametrize("spelling", TABLE_SPELLINGS)
def test_each_table_entry_agrees_with_pint(spelling):
    key = _table_key(spelling)
    if key in ("", "1"):
        assert parse_unit(spelling) == ((), 1.0, False)
        return
    assert _table()[key] == _parse_with_pint(key)


@pytest.mark.parametrize("spelling, factor", [
    ("MHz/T", 1e6), ("mT", 1e-3), ("G", 1e-4), ("kG", 0.1), ("uT/mm", 1e-3), ("ppm/K", 1e-6), ("degC", 1.0),
    ("1/degC", 1.0), ("nm", 1e-9), ("mohm", 1e-3),
])
def test_factors_from_the_table_by_hand(spelling, factor):
    # SI Brochure 9th ed. Table 7 (prefixes); G: 1e-4 T
    assert parse_unit(spelling).factor == pytest.approx(factor, rel=1e-12)


def test_degree_celsius_is_marked_as_an_offset_unit():
    assert parse_unit("degC").offset and not parse_unit("K").offset


def test_a_spelling_outside_the_table_still_goes_to_pint():
    assert "mohm/mK" not in _table()
    info = parse_unit("mohm/mK")
    assert info.factor == pytest.approx(1.0) and info.dimensions == parse_unit("ohm/K").dimensions
    assert parse_unit("volts-ish") is None


def test_a_budget_file_in_common_units_is_checked_without_building_pints_registry(tmp_path):
    # the point of the table: the units check of a budget file in common units never builds the registry
    budget = {"model": "f / g * (1 + a * (t - t0))", "measurand": {"symbol": "B", "unit": "T"},
              "inputs": {"f": {"value": 63.87, "u": 1e-6, "unit": "MHz"},
                         "g": {"value": 42.577, "u": 1e-6, "unit": "MHz/T"},
                         "a": {"value": 1e-8, "u": 1e-9, "unit": "1/K"},
                         "t": {"value": 22.0, "u": 0.1, "unit": "degC"},
                         "t0": {"value": 25.0, "u": 0.0, "unit": "degC"}}}
    path = tmp_path / "budget.json"
    path.write_text(json.dumps(budget))
    code = ("import sys\nfrom fieldbudget import units\nfrom fieldbudget.engine import evaluate\n"
            "from fieldbudget.files.budget_file import load_budget\n"
            "print(evaluate(load_budget(sys.argv[1])).estimate, units._registry.cache_info().currsize)\n")
    out = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    estimate, registries = out.stdout.split()
    assert float(estimate) == pytest.approx(63.87 / 42.577 * (1 - 3e-8), rel=1e-12)
    assert registries == "0"
