"""Golden files for the machine formats of the irrigation-controller review.

Floats are rounded to 3 significant digits and volatile fields (time stamp, ngspice version,
cache use) dropped before comparing.  Regenerate on purpose only:
``DERATE_UPDATE_GOLDEN=1 .venv/bin/python -m pytest tests/report/test_golden.py``.
"""

from __future__ import annotations

import json
import math
import os
import re

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


CASES = [("json", "irrigation.json", "json"), ("sarif", "irrigation.sarif", "json"),
         ("csv", "irrigation.csv", "text"), ("md", "irrigation.md", "text"), ("xml", "irrigation.junit.xml", "text")]


@pytest.mark.parametrize("ext,golden,kind", CASES)
def test_matches_golden(irrigation, ext, golden, kind):
    text = irrigation.report(ext)
    got = json.dumps(norm_json(json.loads(text)), indent=1, sort_keys=True) + "\n" if kind == "json" else norm_text(text)
    path = GOLDEN / golden
    if os.environ.get("DERATE_UPDATE_GOLDEN"):
        path.write_text(got)
    assert path.exists(), f"{path} missing: run with DERATE_UPDATE_GOLDEN=1 to create it"
    assert got == path.read_text(), f"{golden} differs from the golden file"
