"""JCAMP-DX records: split text into labelled data records (LDRs) and group them into blocks.

Labels are matched the way the standard allows (IUPAC JCAMP-DX 4.24, section 3; 5.01 keeps it):
case, spaces, dashes, slashes and underscores are ignored, so ``##DATA TYPE``, ``##DATATYPE``
and ``##Data_Type`` are one label. ``$$`` starts a comment that runs to the end of the line.
Numbers in header records are parsed strictly; a value that is not a number where one is
required is an error that names the label and the line.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import NamedTuple

from service.spectra.reader_errors import ReaderError

_LABEL_NOISE = re.compile(r"[\s\-/_]+")
_LABEL_CACHE: dict[str, str] = {}
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


def normalise_label(raw: str) -> str:
    """``'Data Type'`` -> ``'DATATYPE'``; a private label keeps its ``$`` (``'$URL'``)."""
    got = _LABEL_CACHE.get(raw)
    if got is None:
        got = _LABEL_NOISE.sub("", raw).upper()
        if len(_LABEL_CACHE) < 4096:
            _LABEL_CACHE[raw] = got
    return got


DATA_LABELS = frozenset({"XYDATA", "XYPOINTS", "PEAKTABLE", "PEAKASSIGNMENTS", "DATATABLE", "RADATA"})


class Record(NamedTuple):
    """One labelled data record: normalised label, the label as written, its value and line.
    (A named tuple: files hold dozens of records, and a tuple is built several times faster
    than a frozen dataclass.)

    For data tables (``##XYDATA=`` and the like) ``value`` is the first line only (the
    variable list, e.g. ``(X++(Y..Y))``) and ``body`` is the raw text of the lines after it,
    starting on file line ``body_line``.
    """

    label: str
    raw_label: str
    value: str
    line: int  # 1-based line of the '##' in the file
    body: str = ""
    body_line: int = 0

    def body_lines(self) -> list[tuple[int, str]]:
        """``(file line, text)`` of each non-blank body line, comments removed."""
        out = []
        for i, t in enumerate(self.body.split("\n")):
            t = _strip_comment(t).strip()
            if t:
                out.append((self.body_line + i, t))
        return out


@dataclass
class Block:
    """The records of one data block (``##TITLE`` to ``##END``), in file order."""

    records: list[Record] = field(default_factory=list)
    start_line: int = 0
    _index: dict[str, Record] = field(default_factory=dict, repr=False, compare=False)
    _numbers: dict[str, "WrittenNumber | None"] = field(default_factory=dict, repr=False, compare=False)

    def get(self, label: str) -> Record | None:
        """The first record with this (normalised) label."""
        if len(self._index) != len(self.records):
            self._index = {}
            for rec in reversed(self.records):
                self._index[rec.label] = rec
        return self._index.get(label)

    def text(self, label: str, default: str = "") -> str:
        rec = self.get(label)
        return rec.value.strip() if rec else default

    def number(self, label: str) -> "WrittenNumber | None":
        """The record's value as a number (None if absent or blank); an error if not a number."""
        if label in self._numbers:
            return self._numbers[label]
        rec = self.get(label)
        num = None if rec is None or not rec.value.strip() else parse_number(rec.value, label=rec.raw_label,
                                                                             line=rec.line)
        self._numbers[label] = num
        return num


@dataclass(frozen=True)
class WrittenNumber:
    """A number as written in a header, with the size of its last written digit.

    ``unit`` lets cross-checks allow exactly the rounding the writer applied and no more.
    """

    value: float
    unit: float
    text: str


def parse_number(text: str, *, label: str, line: int) -> WrittenNumber:
    """Parse a header number strictly (a trailing unit word such as ``2 cm-1`` is allowed)."""
    t = text.strip()
    first = t.split()[0] if t.split() else ""
    candidate = first.replace(",", ".") if first.count(",") == 1 and "." not in first else first
    m = _NUMBER.match(candidate)
    if not m:
        raise ReaderError(f"##{label}= on line {line} should be a number but reads {t!r}; correct the header")
    mantissa, exponent = m.group(1), m.group(2)
    decimals = len(mantissa.split(".", 1)[1]) if "." in mantissa else 0
    exp = int(exponent[1:]) if exponent else 0
    value = float(candidate)
    return WrittenNumber(value=value, unit=10.0 ** (exp - decimals), text=first)


def _strip_comment(line: str) -> str:
    i = line.find("$$")
    return line if i < 0 else line[:i]


def _record_starts(text: str) -> list[int]:
    """Offsets of every '##' that opens a line (after optional blanks), found with str.find
    (a multi-line regex anchored at '^' would try every character of a long data table)."""
    out = []
    pos = text.find("##")
    while pos >= 0:
        line_start = text.rfind("\n", 0, pos) + 1
        if not text[line_start:pos].strip(" \t"):
            out.append(pos)
            nxt = text.find("\n", pos)
            if nxt < 0:
                break
            pos = text.find("##", nxt)
        else:
            pos = text.find("##", pos + 2)
    return out


def split_records(text: str) -> list[Record]:
    """Every ``##LABEL=value`` record in file order, continuation lines attached.

    ``text`` has ``\\n`` line ends. Lines before the first record may only be blank or
    comments (a JCAMP-DX file starts with its first record). Works per record, not per line,
    so a long data table costs one slice.
    """
    starts = _record_starts(text)
    if not starts:
        raise ReaderError("no '##LABEL=' records found; this is not a JCAMP-DX file")
    lead = _strip_comment_all(text[: starts[0]]).strip()
    if lead:
        raise ReaderError("text comes before the first '##' record; this is not a JCAMP-DX file")
    records: list[Record] = []
    line = 1
    prev = 0
    for i, pos in enumerate(starts):
        line += text.count("\n", prev, pos)
        prev = pos
        eol = text.find("\n", pos)
        if eol < 0:
            eol = len(text)
        head, eq, rest = text[pos + 2 : eol].partition("=")
        if not eq:
            raise ReaderError(f"line {line} starts a record ('##') but has no '='; the file is damaged")
        raw_label = head.strip()
        label = normalise_label(raw_label)
        body_end = starts[i + 1] if i + 1 < len(starts) else len(text)
        body = text[eol + 1 : body_end] if eol + 1 < body_end else ""
        value = _strip_comment(rest).strip()
        if label not in DATA_LABELS and body.strip():
            more = " ".join(p for p in (_strip_comment(t).strip() for t in body.split("\n")) if p)
            value = f"{value} {more}".strip() if value else more
        records.append(Record(label, raw_label, value, line, body, line + 1))
    return records


def _strip_comment_all(text: str) -> str:
    return "\n".join(_strip_comment(t) for t in text.split("\n"))


def group_blocks(records: list[Record]) -> tuple[Block, list[Block]]:
    """(outer block, inner blocks). A plain file has no inner blocks; a ``##DATA TYPE=LINK``
    file (``##BLOCKS=n``) has one inner block per ``##TITLE`` ... ``##END`` pair."""
    if not records or records[0].label != "TITLE":
        raise ReaderError("a JCAMP-DX file must start with ##TITLE=; this one does not")
    outer = Block(start_line=records[0].line)
    inner: list[Block] = []
    current: Block | None = None
    i = 0
    outer.records.append(records[0])
    i = 1
    while i < len(records):
        rec = records[i]
        if current is None and rec.label == "TITLE":
            current = Block(records=[rec], start_line=rec.line)
        elif current is not None:
            current.records.append(rec)
            if rec.label == "END":
                inner.append(current)
                current = None
        else:
            outer.records.append(rec)
            if rec.label == "END":
                if i + 1 < len(records):
                    nxt = records[i + 1]
                    raise ReaderError(
                        f"the file goes on after ##END= (line {rec.line}) with ##{nxt.raw_label}= on line "
                        f"{nxt.line}; a file with several blocks must say ##DATA TYPE=LINK and ##BLOCKS="
                    )
                break
        i += 1
    if current is not None:
        raise ReaderError(
            f"block '{current.text('TITLE')}' (line {current.start_line}) has no ##END=; the file is cut short"
        )
    if outer.get("END") is None:
        raise ReaderError("the file has no ##END=; it is cut short or damaged")
    return outer, inner
