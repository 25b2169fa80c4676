"""Line-level reading of the ngspice dialect: comments, continuation lines and card tokens.

ngspice rules followed here (ngspice manual, section 2.1.1 "Some naming conventions" and 2.4
"Comments"): ``*`` starts a comment line; ``;`` anywhere, ``$`` preceded and followed by white
space, and ``//`` preceded by white space start an end-of-line comment; a ``+`` at the start of a
line continues the previous card (comment lines may sit between a card and its continuation).
Tokens are separated by white space (and by commas outside brackets); ``{...}``, ``'...'``,
``"..."``, ``(...)`` and ``[...]`` groups are kept whole so expressions and source functions stay
intact, and ``name = value`` is folded into one ``name=value`` token.
"""

from __future__ import annotations

import re

# a number literal as a card writes it, letters (scale factor, unit) only after the digits: 10u, 4.7e-6, 22µF
PLAIN_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?[A-Za-z\u00b5]*$")
_OPEN = {"(": ")", "{": "}", "[": "]"}
_CLOSE = {")", "}", "]"}


def strip_inline_comment(line: str) -> str:
    """Return the line without its end-of-line comment (``;``, ``$ ``, `` //``)."""
    if ";" not in line and "$" not in line and "//" not in line:
        return line
    depth = 0
    quote = ""
    n = len(line)
    for i, ch in enumerate(line):
        if quote:
            if ch == quote:
                quote = ""
            continue
        if ch in "'\"":
            quote = ch
        elif ch in _OPEN:
            depth += 1
        elif ch in _CLOSE:
            depth = max(0, depth - 1)
        elif ch == ";":
            return line[:i]
        elif ch == "$" and depth == 0:
            before = line[i - 1] if i else " "
            after = line[i + 1] if i + 1 < n else " "
            if before in " \t," and after in " \t":
                return line[:i]
        elif ch == "/" and depth == 0 and line.startswith("//", i):
            before = line[i - 1] if i else " "
            if before in " \t":
                return line[:i]
    return line


def split_tokens(text: str) -> list[str]:
    """Split a card into tokens, keeping bracketed groups and quotes whole; fold ``a = b``."""
    if not any(c in text for c in "{}'\"()[]=,"):
        return text.split()
    tokens: list[str] = []
    cur: list[str] = []
    depth = 0
    quote = ""
    for ch in text:
        if quote:
            cur.append(ch)
            if ch == quote:
                quote = ""
            continue
        if ch in "'\"":
            quote = ch
            cur.append(ch)
        elif ch in _OPEN:
            depth += 1
            cur.append(ch)
        elif ch in _CLOSE:
            depth = max(0, depth - 1)
            cur.append(ch)
        elif depth == 0 and (ch.isspace() or ch == ","):
            if cur:
                tokens.append("".join(cur))
                cur = []
        elif depth == 0 and ch == "=":
            # '=' is its own token at top level; folded below
            if cur:
                tokens.append("".join(cur))
                cur = []
            tokens.append("=")
        else:
            cur.append(ch)
    if quote or depth:
        raise ValueError("unbalanced quote or bracket")
    if cur:
        tokens.append("".join(cur))
    return _fold_equals(tokens)


def _fold_equals(tokens: list[str]) -> list[str]:
    out: list[str] = []
    i = 0
    while i < len(tokens):
        tok = tokens[i]
        if tok == "=" and out and i + 1 < len(tokens):
            out[-1] = f"{out[-1]}={tokens[i + 1]}"
            i += 2
            continue
        if tok == "=":
            raise ValueError("'=' without a name or value")
        if out and PLAIN_NUMBER.match(tok) and out[-1].lower().startswith("tc=") and out[-1].count(",") < 2:
            # TC=a,b (another simulator's pair of temperature coefficients): one token, 'tc=a,b'
            out[-1] = f"{out[-1]},{tok}"
            i += 1
            continue
        out.append(tok)
        i += 1
    return out




def split_assignment(token: str) -> tuple[str, str] | None:
    """Return ``(name, value)`` for a ``name=value`` token, else None."""
    if "=" not in token:
        return None
    name, _, value = token.partition("=")
    if not name or name[0] in "{'\"(":
        return None
    return name, value


_POLY_ORDER = re.compile(r"(?i)^poly\s*\(?\s*(\d+)\s*\)?$")


def poly_node_pairs(tokens: list[str]) -> list[str]:
    """An E or G card's ``POLY(n) (a,b) (c,d) coefficients...`` with the controlling node pairs written
    as plain nodes (``a b c d``), as ngspice reads them (it treats the parentheses and commas there as
    separators).  Other cards, and POLY cards already plain, come back unchanged."""
    if len(tokens) < 5 or tokens[0][:1].lower() not in "eg":
        return tokens
    head = tokens[3]
    at = 4
    if head.lower() == "poly" and len(tokens) > 5:
        head, at = head + tokens[4], 5
    m = _POLY_ORDER.match(head)
    if not m or not any("(" in t or "," in t for t in tokens[at:at + 2 * int(m.group(1))]):
        return tokens
    need = 2 * int(m.group(1))
    nodes: list[str] = []
    i = at
    while i < len(tokens) and len(nodes) < need:
        nodes += [p for p in re.split(r"[(),\s]+", tokens[i]) if p]
        i += 1
    if len(nodes) != need:
        return tokens  # not the shape ngspice reads: the element reader says what is wrong
    return list(tokens[:at]) + nodes + list(tokens[i:])
