"""Text from files made inert in every output: one function per output kind, used by every renderer.

Everything a report shows that came from a file (capacitor and net names, titles, part numbers, BOM
references, waiver owners and reasons, scenario names and descriptions, messages that quote them) is
data.  It must never become a control sequence on a terminal, a command in a CI log, markup, a link,
a mention or a table break in Markdown, an element in HTML or XML, or a formula in a spreadsheet.

- ``visible``: control, escape, line-separator and text-direction characters shown as ``\\xNN`` /
  ``\\uNNNN`` (one line: a newline is shown too); the base of the others.
- ``terminal``: ``visible``, the CI log command marks broken (``::`` and ``##`` become ``:\\:`` and
  ``#\\#``: CI systems read commands from log lines, ``##vso[`` anywhere in a line, ``::`` at its start,
  and a folded line can start anywhere), then Rich markup escaped (for ``console.print``).
- ``plain``: ``terminal`` without the markup escaping, for text Rich does not parse (table cells).
- ``json_document`` / ``xml_document``: a rendered JSON or XML report with ``##`` inside its strings
  written as character escapes (the same data, never a log command when printed to stdout in CI).
- ``markdown``: inline Markdown text: ``visible``, punctuation that CommonMark reads inline escaped (and
  a first character that could start a block), HTML
  brackets as entities, and bare links, ``@mentions`` and ``#references`` broken by a zero-width space.
- ``code_span``: a name shown as inline code (no backticks can close it early).
- ``csv_cell``: a text cell whose first character a spreadsheet reads as a formula gets a leading
  apostrophe (``=``, ``+``, ``-``, ``@``, tab, carriage return).
- ``xml_text``: characters XML 1.0 does not allow shown visibly (the XML writer escapes ``<&>``).
- ``html_text``: ``visible`` and HTML-escaped.
"""

from __future__ import annotations

import html
import re

# C0 controls but tab, DEL and C1 controls, line and paragraph separators, bidirectional overrides and
# isolates, the byte-order mark, and the interlinear annotation marks
_HIDDEN = re.compile("[\x00-\x08\x0a-\x1f\x7f-\x9f\u2028\u2029\u200e\u200f\u202a-\u202e\u2066-\u2069\ufeff"
                     "\ufff9-\ufffb]")
_LINKISH = re.compile(r"(?i)(://|www\.|@(?=\w)|#(?=\w)|mailto:)")
_MD_SPECIAL = re.compile(r"([\\`*_\[\]|~])")
_MD_LEADING = re.compile(r"^(\d+(?=[.)](?:\s|$))|)([#+\-=.)])")  # what could start a heading, list, quote or table line


def _show(m: re.Match) -> str:
    ch = m.group(0)
    code = ord(ch)
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def visible(text: object) -> str:
    """Text on one line with every hidden or controlling character shown as an escape."""
    t = "" if text is None else str(text)
    return _HIDDEN.sub(_show, t)


def plain(text: object) -> str:
    """Terminal text that Rich will not parse (a table cell, a Text object): visible and CI-inert."""
    return ci_inert(visible(text))


def terminal(text: object) -> str:
    """Text for ``console.print`` (Rich): visible, with Rich's markup escaped."""
    from rich.markup import escape
    return escape(ci_inert(visible(text)))


_CI_MARK = re.compile(r"([:#])(?=\1)")  # the first of each '::' or '##'
_HASH_PAIR = re.compile(r"#(?=#)")


def ci_inert(text: str) -> str:
    """Text with every ``::`` and ``##`` broken by a backslash (``:\\:``, ``#\\#``)."""
    return _CI_MARK.sub(r"\1\\", text)


def json_document(text: str) -> str:
    """A rendered JSON document ('#' only ever occurs inside its strings) with '##' escaped."""
    return _HASH_PAIR.sub(r"\\u0023", text)


def xml_document(text: str) -> str:
    """A rendered XML document with '##' written as a character reference (text and attributes alike)."""
    return _HASH_PAIR.sub("&#35;", text)


def markdown(text: object) -> str:
    """Inline Markdown that renders as the text and nothing else (no link, image, HTML, mention, heading
    or table break)."""
    t = visible(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    t = _MD_LEADING.sub(r"\1\\\2", _MD_SPECIAL.sub(r"\\\1", t))
    return _LINKISH.sub(lambda m: m.group(0)[0] + "&#8203;" + m.group(0)[1:], t)


def code_span(text: object) -> str:
    """A name as Markdown inline code: fenced with more backticks than it holds, on one line, with the
    table separator escaped (GitHub splits table cells on '|' even in code)."""
    t = visible(text).replace("|", "\\|")
    run = max((len(m) for m in re.findall(r"`+", t)), default=0)
    fence = "`" * (run + 1)
    pad = " " if t.startswith("`") or t.endswith("`") else ""
    return f"{fence}{pad}{t}{pad}{fence}"


def csv_cell(value: object) -> object:
    """A CSV cell: numbers as they are, text that a spreadsheet would read as a formula neutralised."""
    if value is None or isinstance(value, (int, float)):
        return value
    t = ci_inert(visible(value))  # one line: a newline in a cell starts a line of the printed file
    return "'" + t if t[:1] in ("=", "+", "-", "@", "\t", "\r") else t


_XML_BAD = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")


def xml_text(text: object) -> str:
    """Text an XML 1.0 document may hold (characters it forbids shown as escapes)."""
    t = "" if text is None else str(text)
    return _XML_BAD.sub(_show, t)


def html_text(text: object) -> str:
    """Text for HTML element content or an attribute value."""
    return _HASH_PAIR.sub("&#35;", html.escape(visible(text), quote=True))
