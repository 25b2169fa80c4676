"""Hostile text from project files reaches every report inert: terminal, CI log, Markdown, CSV, JUnit,
JSON, SARIF and HTML.

One small board (real ngspice) is reviewed twice: once with plain text and once with hostile text in
every place a file can put text that a report shows (netlist title, capacitor names, part numbers and
makers, waiver owners and reasons, scenario descriptions).  The hostile review must produce documents
of the same *structure* as the plain one (the same Markdown blocks and table cells, the same XML
elements, the same CSV rows, the same HTML tags): text from a file can change what a cell says, never
what the document is.  The outside judges are the parsers people and CI systems use: markdown-it-py
(CommonMark with tables, as GitHub renders pull-request comments), ElementTree, the csv module, the
JSON parser, and the standard library's HTML parser.
"""

from __future__ import annotations

import csv
import io
import json
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import pytest
import yaml
from markdown_it import MarkdownIt

from derate.cli import main

# what an attacker writes into a file, by the system it aims at
TERMINAL = "\x1b[2K\x1b[1A verdict pass\x07\x1b]8;;http://evil.example\x1b\\link\x1b]8;;\x1b\\ \x9b2J"
CI_LOG = "ok\n::error file=board.cir,line=1::fake\r\n##vso[task.complete result=Succeeded]done ::warning::w"
MARKDOWN = ("x\r\n## derate: pass\n[click](https://evil.example) ![i](https://evil.example/i.png) "
            "<img src=x onerror=alert(1)> <script>alert(1)</script> @maintainers #12 www.evil.example "
            "|a|b| `c` *bold* _em_ <https://evil.example>\n- list\n1. item")
SPREADSHEET = '=HYPERLINK("http://evil.example","x")'
XML = "bad\x00\x0b\x1f chars \ufffe end"
LINES = "sep\u2028.include /etc/passwd\u2029 y \u202eright-to-left\u202c"

HOSTILE = {
    "title": "greenhouse hub ## derate: pass [x](https://evil.example) @team #12 <b>|x|</b> ::error::t \u2028.end",
    "names": ("C|1", "C*2_x_"),
    "part_numbers": (SPREADSHEET + TERMINAL, "+1|2" + CI_LOG),
    "makers": ("x\r\n## pass [click](https://evil.example) <img src=x onerror=alert(1)> @maintainers #12 |a|b| `c`",
               "@SUM(1)" + XML + LINES),  # a part field holds at most 200 characters
    "owner": "-2+3" + CI_LOG + TERMINAL,
    "reason": MARKDOWN + XML + LINES,
    "description": TERMINAL + CI_LOG + MARKDOWN + XML,
}
PLAIN = {"title": "greenhouse hub", "names": ("C1", "C2"), "part_numbers": ("CC-1U-10V", "CC-1U-10V-B"),
         "makers": ("Maker A", "Maker B"), "owner": "R. Ibe", "reason": "ECO-7 rework in rev D",
         "description": "high line, warm"}

FORMATS = {"json": "report.json", "csv": "report.csv", "markdown": "report.md", "html": "report.html",
           "sarif": "report.sarif", "junit": "report.xml", "github": "report.annotations"}


def write_project(folder: Path, t: dict) -> Path:
    """Two 10 V ceramics on a 20 V peak sine (both fail the voltage check); C1's failure is waived."""
    folder.mkdir(parents=True)
    c1, c2 = t["names"]
    (folder / "board.cir").write_bytes(
        (f"{t['title']}\nV1 in 0 SIN(0 20 1k)\nR1 in out 10\n{c1} out 0 1u\nR2 out b 10\n{c2} b 0 1u\n"
         ".tran 1u 3m\n.end\n").encode())
    parts = {name: {"technology": "ceramic-class1", "rated_voltage_v": 10, "part_number": pn, "manufacturer": mk}
             for name, pn, mk in zip(t["names"], t["part_numbers"], t["makers"])}
    (folder / "parts.yaml").write_text(yaml.safe_dump({"parts": parts}, allow_unicode=False))
    (folder / "waivers.yaml").write_text(yaml.safe_dump({"waivers": [
        {"reference": c1, "rule": "stress.voltage", "owner": t["owner"], "reason": t["reason"],
         "expires": "2099-01-01"}]}, allow_unicode=False))
    (folder / "derate.yaml").write_text(yaml.safe_dump({
        "netlist": "board.cir", "parts": "parts.yaml", "waivers": "waivers.yaml",
        "scenarios": [{"name": "warm", "description": t["description"], "temperature_c": 40}]},
        allow_unicode=False))
    return folder / "derate.yaml"


def review(folder: Path, t: dict, capsys) -> dict:
    """Every output of one project: {'terminal': (out, err), 'quiet': (out, err), format: text...}."""
    project = write_project(folder, t)
    got = {}
    code = main(["check", "--no-cache", "--no-color", str(project)])
    got["terminal"] = capsys.readouterr()
    got["code"] = code
    assert main(["check", "--no-color", "--quiet", str(project)]) == code
    got["quiet"] = capsys.readouterr()
    for fmt, name in FORMATS.items():
        assert main(["check", "--no-color", "--format", fmt, "-o", str(folder / name), str(project)]) == code
        capsys.readouterr()
        got[fmt] = (folder / name).read_text(encoding="utf-8")
    # a report on stdout with --quiet stays one valid document although the gate fails
    assert main(["check", "--no-color", "--quiet", "--format", "json", str(project)]) == code
    got["quiet-json"] = capsys.readouterr()
    return got


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    """The plain and the hostile review (module scope: each runs ngspice once, then the cache)."""
    capsys = _Capture()
    with capsys:
        plain = review(tmp_path_factory.mktemp("plain") / "hub", PLAIN, capsys)
        hostile = review(tmp_path_factory.mktemp("hostile") / "hub", HOSTILE, capsys)
    return plain, hostile


class _Capture:
    """capsys for a module-scoped fixture: stdout and stderr of main() captured through file objects."""

    def __enter__(self):
        import sys
        self._saved = sys.stdout, sys.stderr
        sys.stdout, sys.stderr = io.StringIO(), io.StringIO()
        return self

    def __exit__(self, *exc):
        import sys
        sys.stdout, sys.stderr = self._saved

    def readouterr(self):
        import sys
        out, err = sys.stdout.getvalue(), sys.stderr.getvalue()
        sys.stdout.seek(0), sys.stdout.truncate(), sys.stderr.seek(0), sys.stderr.truncate()
        return _Out(out, err)


class _Out(tuple):
    def __new__(cls, out, err):
        return super().__new__(cls, (out, err))

    out = property(lambda self: self[0])
    err = property(lambda self: self[1])


HIDDEN = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")


def test_both_reviews_ran_and_failed_the_same_way(outputs):
    plain, hostile = outputs
    assert plain["code"] == hostile["code"] == 1  # C2 fails; C1's failure is waived
    for got in (plain, hostile):
        record = json.loads(got["json"])
        assert {c["status"] for c in record["capacitors"]} == {"fail", "waived"} or \
            sorted(c["status"] for c in record["capacitors"]) == ["fail", "fail"]


@pytest.mark.parametrize("stream", ["terminal", "quiet"])
def test_terminal_and_ci_log_get_no_control_and_no_command(outputs, stream):
    _, hostile = outputs
    out, err = hostile[stream]
    text = out + err
    assert "Traceback" not in text
    assert not HIDDEN.search(text.replace("\n", "")), repr(HIDDEN.search(text.replace("\n", "")))
    assert "\r" not in text
    for line in text.splitlines():
        assert not line.strip().startswith(("::", "##")), line  # a CI command needs the line start
        assert "##vso[" not in line  # Azure reads this anywhere in a line
    # the hostile data is shown, visibly escaped, not dropped
    if stream == "terminal":
        assert "\\x1b[2K" in text and "verdict pass" in text


def test_quiet_report_on_stdout_stays_valid_json_when_the_gate_fails(outputs):
    _, hostile = outputs
    out, err = hostile["quiet-json"]
    record = json.loads(out)  # nothing appended after the document
    assert record["summary"]["verdict"] == "fail"
    assert err.startswith("derate: fail (exit 1)")  # the verdict lines went to stderr


def _blocks(md: str) -> list[tuple[str, int]]:
    """The block structure of a Markdown document as GitHub renders it: token types and table cells."""
    parser = MarkdownIt("commonmark").enable("table").enable("strikethrough")
    return [(tok.type, tok.level) for tok in parser.parse(md) if tok.type != "inline"]


def test_markdown_has_the_structure_of_the_plain_report(outputs):
    plain, hostile = outputs
    assert _blocks(hostile["markdown"]) == _blocks(plain["markdown"])
    parser = MarkdownIt("commonmark").enable("table").enable("strikethrough")
    inline = [child for tok in parser.parse(hostile["markdown"]) if tok.type == "inline" for child in tok.children]
    kinds = {c.type for c in inline}
    assert not kinds & {"link_open", "image", "html_inline"}, kinds
    plain_inline = [child for tok in parser.parse(plain["markdown"]) if tok.type == "inline" for child in tok.children]
    assert {c.type for c in inline} <= {c.type for c in plain_inline} | {"text", "softbreak"}
    html_blocks = [tok.content for tok in parser.parse(hostile["markdown"]) if tok.type == "html_block"]
    assert html_blocks == [tok.content for tok in parser.parse(plain["markdown"]) if tok.type == "html_block"]
    # what GitHub would turn into links or notifications is broken in the raw text
    raw = hostile["markdown"]
    for live in ("https://evil", "www.evil", "@maintainers", "#12", "<img", "<script"):
        assert live not in raw, live
    assert "\r" not in raw and not HIDDEN.search(raw.replace("\n", ""))


def test_csv_cells_are_never_formulas_and_rows_stay_rows(outputs):
    plain, hostile = outputs
    rows = list(csv.reader(io.StringIO(hostile["csv"])))
    assert len(rows) == len(list(csv.reader(io.StringIO(plain["csv"]))))
    assert len(hostile["csv"].splitlines()) == len(rows)  # no cell spans lines
    assert len({len(r) for r in rows}) == 1
    for row in rows[1:]:
        for cell in row:
            if cell[:1] in ("=", "+", "-", "@", "\t", "\r"):
                float(cell)  # only a number may start so
    assert any(cell.startswith("'=HYPERLINK") for row in rows for cell in row)  # shown, not dropped


def test_junit_parses_with_the_plain_report_elements(outputs):
    plain, hostile = outputs
    h, p = ET.fromstring(hostile["junit"]), ET.fromstring(plain["junit"])
    assert [e.tag for e in h.iter()] == [e.tag for e in p.iter()]
    assert "##" not in hostile["junit"]


@pytest.mark.parametrize("fmt", ["json", "sarif"])
def test_json_documents_keep_the_data_exactly(outputs, fmt):
    _, hostile = outputs
    doc = json.loads(hostile[fmt])  # parses
    text = json.dumps(doc, ensure_ascii=False)
    assert "##" not in hostile[fmt]  # escaped as \u0023 in the file, the same data once parsed
    if fmt == "json":
        parts = {c["reference"]: c["part_number"] for c in doc["capacitors"]}
        assert parts == dict(zip(HOSTILE["names"], HOSTILE["part_numbers"]))  # machine data unchanged
        assert HOSTILE["title"] in text


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags, self.attrs = [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += [name for name, _ in attrs]


def test_html_has_the_tags_of_the_plain_report(outputs):
    plain, hostile = outputs
    h, p = _Tags(), _Tags()
    h.feed(hostile["html"])
    p.feed(plain["html"])
    assert sorted(set(h.tags)) == sorted(set(p.tags))
    assert not {a for a in h.attrs if a.startswith("on")} - {a for a in p.attrs if a.startswith("on")}
    assert "<img" not in hostile["html"] and "<script>alert" not in hostile["html"]
    assert not HIDDEN.search(hostile["html"].replace("\n", ""))


def test_a_capacitor_name_with_escapes_stays_inert_when_its_simulation_fails(tmp_path, capsys):
    """ngspice cannot simulate a card named with an escape character; the findings that name it (no
    result) reach the quiet gate lines, JUnit and Markdown inert."""
    folder = tmp_path / "hub"
    folder.mkdir()
    (folder / "board.cir").write_bytes(b"hub\nV1 in 0 SIN(0 5 1k)\nR1 in out 10\nC1\x1bM\x07 out 0 1u\n"
                                       b"Cx\x1b7\xc2\x9b2J out 0 1u\n.tran 1u 2m\n.end\n")
    (folder / "derate.yaml").write_text("netlist: board.cir\n")
    code = main(["check", "--no-cache", "--no-color", "--quiet", str(folder / "derate.yaml")])
    out, err = capsys.readouterr()
    assert code != 0 and "Traceback" not in out + err
    assert "\\x1b" in out + err  # named, visibly
    assert not HIDDEN.search((out + err).replace("\n", ""))
    assert main(["check", "--no-color", "--format", "junit", str(folder / "derate.yaml")]) == code
    junit = capsys.readouterr().out
    assert "\\x1b" in junit and ET.fromstring(junit).tag == "testsuites"
    assert main(["check", "--no-color", "--format", "markdown", str(folder / "derate.yaml")]) == code
    md = capsys.readouterr().out
    assert "\\x1b" in md and not HIDDEN.search(md.replace("\n", ""))


def test_github_annotations_are_one_command_each_whatever_the_text(outputs):
    """The one output that is made of CI commands: each finding one workflow command, its text escaped
    as GitHub's runner reads it (%25, %0D, %0A; ':' and ',' in properties), so a file's text can
    neither end a command early nor start another."""
    plain, hostile = outputs
    lines = hostile["github"].splitlines()
    assert len(lines) == len(plain["github"].splitlines())
    command = re.compile(r"^::(error|warning|notice) (file=[^,:]+,line=\d+,)?title=[^,:]*::[^\r\n]*$")
    for line in lines:
        assert command.match(line), line
        assert not HIDDEN.search(line)
    assert any("C*2_x_" in line for line in lines)  # the hostile capacitor's finding is there, as data
