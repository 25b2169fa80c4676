"""Golden files for the machine formats of the irrigation-controller review.

Floats are rounded to 3 significant digits and volatile fields (time stamp, ngspice version,
cache use) dropped before comparing.  Regenerate on purpose only:
``DERATE_UPDATE_GOLDEN=1 .venv/bin/python -m pytest tests/report/test_golden.py``.

A golden file is a regression net, never the truth of a formula: regeneration prints every judged
number that changed (finding, scenario: measured, limit, ratio before -> after) and refuses when a
changed check has no formula test of its own (FORMULA_TESTS: tests that assert the check's value,
limit and ratio against a hand calculation or a published rule).
"""

from __future__ import annotations

import json
import math
import os
import re
from pathlib import Path

import pytest

from tests.conftest import DATA

pytestmark = pytest.mark.ngspice
GOLDEN = DATA / "golden"
VOLATILE = {"generated_utc", "ngspice", "from_cache", "version", "informationUri", "originalUriBaseIds", "run"}


def _round(x: float) -> float:
    if x == 0 or not math.isfinite(x):
        return x
    return float(f"{x:.3g}")


def norm_json(obj):
    if isinstance(obj, dict):
        return {k: norm_json(v) for k, v in obj.items() if k not in VOLATILE}
    if isinstance(obj, list):
        return [norm_json(v) for v in obj]
    if isinstance(obj, float):
        return _round(obj)
    return obj


_NUMBER = re.compile(r"(?<![\w.\-])\d[\d,]*(?:\.\d+)?(?:e[+-]?\d+)?(?![\w.\-])")


def norm_text(text: str) -> str:
    def repl(m):
        raw = m.group(0).replace(",", "")
        try:
            return f"{_round(float(raw)):g}"
        except ValueError:
            return m.group(0)
    return _NUMBER.sub(repl, text)


# every rule the golden review judges -> the tests that pin its formula against an outside truth
TESTS = Path(__file__).parents[1]
FORMULA_TESTS = {
    "stress.voltage": ["checks/test_voltage_rules.py", "judge/test_maker_rules.py"],
    "stress.ac-voltage": ["checks/test_thermal_rules.py"],
    "stress.reverse": ["checks/test_reverse_rules.py"],
    "stress.surge": ["checks/test_thermal_rules.py", "judge/test_maker_rules.py"],
    "stress.ripple": ["checks/test_thermal_rules.py", "judge/test_maker_rules.py"],
    "stress.hotspot": ["checks/test_thermal_rules.py", "judge/test_maker_rules.py"],
    "stress.self-heating": ["checks/test_thermal_rules.py"],
    "stress.life": ["checks/test_thermal_rules.py", "judge/test_maker_rules.py", "test_worked_example.py"],
    "stress.dc-bias": ["checks/test_thermal_rules.py"],
}


def judged(doc: dict) -> dict[tuple, tuple]:
    """{(subject, rule, scenario): (measured, limit, ratio)} of a review record's findings."""
    return {(f["subject"], f["rule"], f["scenario"]): (f.get("measured"), f.get("limit"), f.get("ratio"))
            for f in doc.get("findings", [])}


def changes(old: dict, new: dict) -> list[str]:
    """The judged numbers that differ between two golden records, in words."""
    before, after = judged(old), judged(new)
    out = []
    for key in sorted(set(before) | set(after), key=str):
        if before.get(key) != after.get(key):
            out.append(f"{key[0]} {key[1]} [{key[2]}]: {before.get(key)} -> {after.get(key)}")
    return out


def test_every_judged_rule_has_formula_tests():
    for rule, files in FORMULA_TESTS.items():
        for name in files:
            assert (TESTS / name).is_file(), (rule, name)
            assert rule.split(".", 1)[1].replace("-", "") in (TESTS / name).read_text().replace("-", "").replace(
                "_", "").lower() or "check(" in (TESTS / name).read_text(), (rule, name)


CASES = [("json", "irrigation.json", "json"), ("sarif", "irrigation.sarif", "json"),
         ("csv", "irrigation.csv", "text"), ("md", "irrigation.md", "text"), ("xml", "irrigation.junit.xml", "text")]


@pytest.mark.parametrize("ext,golden,kind", CASES)
def test_matches_golden(irrigation, ext, golden, kind, capsys):
    text = irrigation.report(ext)
    got = json.dumps(norm_json(json.loads(text)), indent=1, sort_keys=True) + "\n" if kind == "json" else norm_text(text)
    path = GOLDEN / golden
    if os.environ.get("DERATE_UPDATE_GOLDEN"):
        if ext == "json" and path.exists():
            changed = changes(json.loads(path.read_text()), json.loads(got))
            rules = {line.split(" ", 2)[1] for line in changed}
            untested = sorted(r for r in rules if r.startswith("stress.") and r not in FORMULA_TESTS)
            assert not untested, f"refused: {', '.join(untested)} changed and has no formula test (FORMULA_TESTS)"
            with capsys.disabled():
                print("\ngolden changes (measured, limit, ratio):\n" + "\n".join(changed or ["none"]))
        path.write_text(got)
    assert path.exists(), f"{path} missing: run with DERATE_UPDATE_GOLDEN=1 to create it"
    assert got == path.read_text(), f"{golden} differs from the golden file"
