"""Every resource a repository's files can make derate spend has a bound, tested just under and just
over it: the names reference ranges expand to (over all files), glob pattern length, parser memory
per byte of a KiCad schematic, ``.step`` values and counts, and the corners and time a project file
may ask for (only the person running derate raises those, with flags).  Over a bound: exit 2 with
the file and what was expected, never exit 4 and never the memory or time spent first.
"""

from __future__ import annotations

import textwrap
import tracemalloc
from pathlib import Path

import pytest

import derate
from derate.cli import main
from derate.errors import DataError
from derate.parts import MAX_PATTERN, MAX_RANGE, MAX_REFERENCES, Part, PartTable, expand_reference
from derate.project import MAX_FILE_SCENARIOS, MAX_FILE_TIMEOUT_S

NETLIST = "greenhouse hub sensor filter\nV1 in 0 SIN(0 5 1k)\nR1 in out 100\nC1 out 0 1u\n.tran 1u 3m\n.end\n"
PART = Part(technology="ceramic-class1", rated_voltage_v=50.0)


def _project(folder: Path, yaml_text: str, netlist: str = NETLIST, parts: str | None = None) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "board.cir").write_text(netlist)
    if parts is not None:
        (folder / "parts.yaml").write_text(parts)
    (folder / "derate.yaml").write_text("netlist: board.cir\n" + yaml_text)
    return folder / "derate.yaml"


def _check(project: Path, capsys, *flags) -> tuple[int, str]:
    code = main(["check", "--no-color", "--no-cache", *flags, str(project)])
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err and "internal error" not in err
    return code, err


# ---------------------------------------------------------------- reference ranges
def test_one_range_at_most_max_range_names():
    assert len(expand_reference(f"C1-C{MAX_RANGE}")[0]) == MAX_RANGE
    with pytest.raises(DataError, match="at most 10,000 names"):
        expand_reference(f"C1-C{MAX_RANGE + 1}")


def test_ranges_are_bounded_in_total_over_every_file():
    """Twenty full ranges reach the total exactly; one more name, in another file, is refused before
    anything is expanded."""
    table = PartTable()
    per_file = MAX_REFERENCES // 20
    for k in range(20):
        table.add(f"{chr(65 + k)}1-{chr(65 + k)}{per_file}", PART, f"bom{k}.csv:2", soft=True)
    assert table.expanded == MAX_REFERENCES
    with pytest.raises(DataError) as exc:
        table.add("Z1", PART, "parts.yaml:7")
    assert "more than 200,000 names" in str(exc.value) and str(exc.value).startswith("parts.yaml:7")


def test_a_short_hostile_parts_key_is_refused_without_its_memory(tmp_path, capsys):
    """A 5 KB key of ranges once expanded to 612 MB; now it stops at the total, within a small budget."""
    key = ",".join(f"Q{k}_1-Q{k}_{MAX_RANGE}" for k in range(300))
    project = _project(tmp_path, "parts: parts.yaml\n", parts=f"parts:\n  ? '{key}'\n  : {{technology: film-polyester}}\n")
    tracemalloc.start()
    code, err = _check(project, capsys)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert code == 2 and "more than 200,000 names" in err and "parts.yaml" in err
    assert peak < 100 * 2 ** 20, peak  # at most the bounded expansion, never 300 x 10,000 names


# ---------------------------------------------------------------- glob patterns
@pytest.mark.parametrize("key,where", [
    ("exclude", "exclude[0]"), ("reversed_terminals", "reversed_terminals[0]")])
def test_patterns_in_the_project_are_bounded(tmp_path, capsys, key, where):
    """Unclosed '[' made a 20 KB pattern compile for 49.6 s; a pattern is at most 200 characters."""
    ok = _project(tmp_path / "ok", f"{key}: ['C9{'[' * (MAX_PATTERN - 2)}']\n")
    code, err = _check(ok, capsys)
    assert f"{where}: expected" not in err  # accepted as a pattern (at most: it matches no capacitor)
    bad = _project(tmp_path / "bad", f"{key}: ['C9{'[' * 20_000}']\n")
    code, err = _check(bad, capsys)
    assert code == 2 and f"derate.yaml:2: {where}" in err and "200" in err


def test_waiver_and_parts_patterns_are_bounded(tmp_path, capsys):
    waivers = tmp_path / "w" / "waivers.yaml"
    project = _project(tmp_path / "w", "waivers: waivers.yaml\n")
    waivers.write_text(f"waivers:\n  - {{reference: 'C{'[' * 5000}', rule: '*', reason: ten characters at least, "
                       "owner: R. Ibe, expires: 2099-01-01}\n")
    code, err = _check(project, capsys)
    assert code == 2 and "waivers.yaml" in err and "reference" in err
    with pytest.raises(DataError, match="at most 200"):
        expand_reference("C" + "[" * MAX_PATTERN)
    assert expand_reference("C" + "[" * (MAX_PATTERN - 1))[1]


# ---------------------------------------------------------------- KiCad parser memory
def test_schematic_parser_memory_is_proportional_to_the_terms():
    """kiutils' own tokenizer spent about 230 bytes per byte of one long quoted string (an 8 MB field:
    1.9 GB); derate's reads the same lists in a few bytes per byte."""
    from kiutils.utils.sexpr import parse_sexp as kiutils_parse

    from derate.schematic import parse_sexp

    field = "x" * 2_000_000
    text = f'(kicad_sch (version 20230121) (property "Reference" "{field}"))'
    sample = '(kicad_sch (a "q\\"r" 1 2.5 -3) (b "") (c 12\n 3))'
    assert parse_sexp(sample) == kiutils_parse(sample)  # the same lists kiutils would build
    tracemalloc.start()
    got = parse_sexp(text)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert got[2][2] == field
    assert peak < 4 * len(text), peak


# ---------------------------------------------------------------- .step
STEP_NETLIST = "greenhouse hub\n.param r=100\nV1 in 0 SIN(0 5 1k)\nR1 in out {r}\nC1 out 0 1u\n{step}\n.tran 1u 3m\n.end\n"


@pytest.mark.parametrize("step,message", [
    (".step temp list -300", ".step temp value -300 °C is outside -273.15"),
    (".step temp list 25 501", ".step temp value 501 °C is outside"),
    (".step temp list 1e6", "outside"),
    (".step temp 0 1e308 1e-308", "out of range"),
    (".step param r 1 1e29 1e-29", "values (expected 1 to 200)"),
    (".step param r dec 1 1e29 1e29", "values (expected 1 to 200)"),
])
def test_step_values_have_the_bounds_of_the_project_file(tmp_path, capsys, step, message):
    project = _project(tmp_path, "", STEP_NETLIST.replace("{step}", step))
    code, err = _check(project, capsys)
    assert code == 2 and "board.cir:6" in err and message in err, err


def test_step_temperatures_at_the_bounds_are_read(tmp_path):
    project = derate.load_project(_project(tmp_path, "", STEP_NETLIST.replace("{step}", ".step temp list -273 500")))
    plan = derate.api.plan(project)
    assert sorted(sc.temperature_c for sc in plan.project.scenarios) == [-273.0, 500.0]


# ---------------------------------------------------------------- odd data: exit 2, not 4
@pytest.mark.parametrize("text,where", [
    ("1: x\nfoo: y\n", "derate.yaml:2"),
    ("scenarios:\n  - {name: a, 2: x, zz: 1}\n", "derate.yaml:3: scenarios[0]"),
])
def test_integer_keys_beside_unknown_keys_are_input_errors(tmp_path, capsys, text, where):
    code, err = _check(_project(tmp_path, text), capsys)
    assert code == 2 and where in err and "unknown key(s)" in err


# ---------------------------------------------------------------- corners and time
def _matrix(a: int, b: int) -> str:
    """A matrix of a climate levels by b line levels."""
    return ("matrix:\n  axes:\n    climate:\n" + "".join(f"      - {{name: t{k}, temperature_c: {k}}}\n" for k in range(a))
            + "    line:\n" + "".join(f"      - {{name: l{k}, description: line {k}}}\n" for k in range(b)))


def test_a_project_file_runs_at_most_200_scenarios_unless_the_runner_says_more(tmp_path, capsys):
    under = derate.load_project(_project(tmp_path / "under", _matrix(20, 10)))
    assert len(derate.api.plan(under).project.scenarios) == MAX_FILE_SCENARIOS
    over = _project(tmp_path / "over", _matrix(67, 3))
    with pytest.raises(DataError, match="runs 201 scenarios"):
        derate.api.plan(derate.load_project(over))
    code, err = _check(over, capsys)
    assert code == 2 and "--max-scenarios" in err
    raised = derate.api.plan(derate.load_project(over), derate.ReviewOptions(max_scenarios=201))
    assert len(raised.project.scenarios) == 201


def test_a_project_file_asks_for_at_most_4_hours_per_scenario(tmp_path, capsys):
    ok = derate.load_project(_project(tmp_path / "ok", f"analysis: {{timeout_s: {MAX_FILE_TIMEOUT_S:g}}}\n"))
    assert ok.analysis.timeout_s == MAX_FILE_TIMEOUT_S
    for key in ("timeout_s", "stall_s"):
        code, err = _check(_project(tmp_path / key, f"analysis: {{{key}: 604800}}\n"), capsys)
        assert code == 2 and f"analysis.{key}" in err and "14400" in err
    # the person running derate may give more
    assert derate.ReviewOptions(timeout_s=604800).timeout_s == 604800
