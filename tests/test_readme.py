"""The README's examples work as written."""

from __future__ import annotations

import json
import re
from pathlib import Path

from fieldbudget.engine import Budget, evaluate

README = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")


def _json_blocks():
    return [json.loads(b) for b in re.findall(r"```json\n(.*?)```", README, flags=re.S)]


def test_readme_opens_with_the_job():
    first = README.split("\n\n")[1]
    assert first.startswith("fieldbudget is for metrologists") and "NMR" in first


def test_quickstart_has_two_commands():
    block = re.search(r"## Quickstart.*?```bash\n(.*?)```", README, flags=re.S).group(1)
    assert [line.split("#")[0].strip() for line in block.strip().splitlines()] == [
        "python3 quickstart.py lab", "python3 quickstart.py test"]


def test_budget_file_example_evaluates():
    budgets = [b for b in _json_blocks() if "inputs" in b and "model" in b]
    assert budgets, "the README shows a budget file"
    for b in budgets:
        r = evaluate(Budget.from_dict(b, where="README"))
        assert r.standard_uncertainty > 0


def test_safety_section_present():
    assert "## Safety" in README and "Implanted medical devices" in README and "Cryogens" in README


def test_nmr_measurement_example_is_the_tested_file_and_evaluates():
    from fieldbudget.nmr import NMRMeasurement

    data = json.loads((Path(__file__).parent / "nmr" / "data" / "water_cylinder_1p5T.json").read_text())
    examples = [b for b in _json_blocks() if "nucleus" in b]
    assert examples == [data]
    r = NMRMeasurement.from_dict(examples[0]).evaluate()
    assert r.result.standard_uncertainty > 0


def test_commands_named_in_the_readme_exist():
    from fieldbudget.cli import COMMANDS

    blocks = "\n".join(re.findall(r"```bash\n(.*?)```", README, flags=re.S))
    used = set(re.findall(r"^fieldbudget (\w+)", blocks, flags=re.M))
    assert used and used <= set(COMMANDS), used - set(COMMANDS)
