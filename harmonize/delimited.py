"""Delimited text: which delimiter splits a file, and where its table starts and ends.

Exports often carry lines that are not rows: a title and a "generated on" line above the
header, a "source: ..." note below the data. Read as rows they would make the title the
header, or put a sentence into the first column. Such lines are set aside (and named in
the report, so nothing is lost), but only where the file shows them plainly:

* above the header: lines with at most one non-blank field, followed by a header of two
  or more, where two or more such lines come first, or a blank line stands between them
  and the header, or they carry the table's delimiters (a spreadsheet's title row saved
  as "Title;;;"); one bare line right above a header stays the header, since a one-column
  list of "Lastname, First" looks just like that;
* a file no delimiter splits may still be a table whose fields are separated by runs of
  spaces (statistics packages and old systems write such text): it is read so (the
  delimiter ``SPACES``) when every line splits into the same number of fields, two or
  more, some column holds only numbers, and the columns are aligned (runs of spaces) or
  their names quoted, so that a column of "4.4 gal" or "2 May 2024", a list of "First
  Last" names or a page of prose stays one column;
* below the data: up to ``MAX_NOTE_LINES`` last lines that hold no delimiter and no quote
  at all, in a table of two or more columns. A data row always carries its delimiters,
  even when all but its first cell are empty.
"""

from __future__ import annotations

import csv
import io
import itertools
import re
from dataclasses import dataclass, field

CANDIDATE_DELIMITERS = (",", ";", "\t", "|")
SNIFF_CHARS = 65_536
SNIFF_RECORDS = 200
# A line made only of these (",,," or ";;") above the header is an empty row.
BLANKISH = " \t" + "".join(CANDIDATE_DELIMITERS)
LINE_BREAK = re.compile(r"\r\n|\r|\n")
SPACES = " "            # the delimiter of a table whose fields are separated by spaces
FIELD_SEPARATOR = "\x1f"  # what runs of spaces become for the parser
NUMERIC_FIELD = re.compile(r"[-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?")
MAX_TITLE_LINES = 30    # lines looked at above a header
MAX_NOTE_LINES = 5      # note lines below the data
ROWS_BELOW_HEADER = 20  # rows read below a header that follows title lines
SHOWN_CHARS = 200       # of a set-aside line, in the report
TITLE_CHARS = 1_000     # a longer first line is no title


def detect_delimiter(sample: str) -> str:
    """The delimiter that splits the sample's records most consistently.

    The header (first non-blank record) fixes the column count, so a candidate
    must give it more than one field; data records are scored on how many
    match that count, minus how many overflow it. csv.Sniffer breaks ties.
    """
    scores: dict[str, float] = {}
    for delim in CANDIDATE_DELIMITERS:
        counts = sample_field_counts(sample, delim)
        if not counts or counts[0] <= 1:
            continue
        header, data = counts[0], counts[1:]
        exact = sum(c == header for c in data) / len(data) if data else 1.0
        over = sum(c > header for c in data) / len(data) if data else 0.0
        if exact >= 0.5:
            scores[delim] = exact - over
    if not scores:
        return _ragged_delimiter(sample)
    top = max(scores.values())
    tied = [d for d in CANDIDATE_DELIMITERS if scores.get(d) == top]
    return tied[0] if len(tied) == 1 else _sniffer_pick(sample, tied)


def _ragged_delimiter(sample: str) -> str:
    """The delimiter of a file whose rows rarely match the header's field count.

    Rows that are ragged still split on their delimiter: a candidate that splits the
    header and most data records is the delimiter, and the parser then pads short rows
    or names the first row with too many fields, instead of reading one column.
    """
    best, best_share = "", 0.5
    for delim in CANDIDATE_DELIMITERS:
        counts = sample_field_counts(sample, delim)
        if len(counts) < 2 or counts[0] <= 1:
            continue
        share = sum(c > 1 for c in counts[1:]) / (len(counts) - 1)
        if share > best_share:
            best, best_share = delim, share
    return best


def sample_field_counts(sample: str, delim: str) -> list[int]:
    reader = csv.reader(
        io.StringIO(sample, newline=""), delimiter=delim, quotechar='"', strict=False
    )
    records = list(itertools.islice(reader, SNIFF_RECORDS + 1))
    if len(sample) >= SNIFF_CHARS and records:
        records.pop()  # the cut may have split the last record
    return [len(r) for r in records if any(f.strip(BLANKISH) for f in r)]


def _sniffer_pick(sample: str, tied: list[str]) -> str:
    try:
        guess = csv.Sniffer().sniff(sample, delimiters="".join(tied)).delimiter
    except csv.Error:
        guess = ""
    return guess if guess in tied else tied[0]


def leading_blank_lines(text: str) -> int:
    """Length of the lines above the header that hold only spaces or delimiters (",,,")."""
    chars = re.escape(BLANKISH)
    match = re.match(rf"(?:[{chars}]*(?:\r\n|\r|\n))*", text)
    return match.end() if match else 0


@dataclass(frozen=True)
class TableStart:
    """Where the header line begins (a character offset), the delimiter, and the
    non-blank lines set aside above it."""

    offset: int
    delimiter: str
    above: list[str] = field(default_factory=list)


def table_start(text: str, forced: str | None = None) -> TableStart:
    """The header line of ``text``: the first line, or the first line after title lines.

    Below title lines, the table starts at the first line that splits into two or more
    fields; the delimiter is the one that finds such a line first (and the most fields
    in it), the detected one on a tie."""
    first = leading_blank_lines(text)
    delim = forced if forced is not None else detect_delimiter(text[first:first + SNIFF_CHARS])
    plain = TableStart(first, delim)
    if not delim and forced is None and _spaced_table(text[first:first + SNIFF_CHARS]):
        return TableStart(first, SPACES)
    lines = _lines(text, first)
    if not lines or len(lines[0][1]) > TITLE_CHARS or _filled(lines[0][1], delim) >= 2:
        return plain
    tried = (forced,) if forced is not None else (delim, *CANDIDATE_DELIMITERS)
    counts = {d: _filled_counts(lines, d) for d in dict.fromkeys(tried) if d}
    if not counts:
        return plain
    chosen = min(counts, key=lambda d: _first_wide(counts[d]))
    found = _after_titles(text, lines, counts[chosen], chosen, forced is None)
    return found or plain


def _filled_counts(lines: list[tuple[int, str]], delim: str) -> list[int]:
    return [_filled(line, delim) if line.strip(BLANKISH) else 0 for _, line in lines]


def _first_wide(filled: list[int]) -> tuple[int, int]:
    """(index, minus width) of the first line of two or more fields: earliest, widest."""
    wide = next((i for i, n in enumerate(filled) if n >= 2), len(filled))
    return wide, -(filled[wide] if wide < len(filled) else 0)


def _spaced_table(sample: str) -> bool:
    """Whether the sample's lines are rows of fields separated by runs of spaces."""
    lines = [line for line in LINE_BREAK.split(sample)[:SNIFF_RECORDS] if line.strip()]
    if len(sample) >= SNIFF_CHARS:
        lines = lines[:-1]   # the cut may have split the last line
    rows = [line.split() for line in lines]
    if len(rows) < 3 or len(rows[0]) < 2 or any(len(r) != len(rows[0]) for r in rows):
        return False
    if any(_half_quoted(field) for row in rows for field in row):
        return False   # a quoted field holding spaces: not split on them
    # "4.4 gal" or "2 May 2024" under a header of as many words is one column: a table
    # shows its columns by aligning them (runs of spaces, tabs) or by quoting its names
    aligned = any(_GAP.search(line.strip()) for line in lines)
    quoted = all(_QUOTED.fullmatch(name) for name in rows[0])
    columns = zip(*rows[1:])
    numeric = any(all(NUMERIC_FIELD.fullmatch(v) for v in column) for column in columns)
    return numeric and (aligned or quoted)


_GAP = re.compile(r"\S(?: {2,}|\t)\S")
_QUOTED = re.compile(r"'[^']*'|\"[^\"]*\"")


def _half_quoted(field: str) -> bool:
    """A field split off a quoted text: it opens a quote it does not close, or closes one."""
    for quote in ('"', "'"):
        if field.startswith(quote) != (len(field) > 1 and field.endswith(quote)):
            return True
    return '"' in field[1:-1]


def spaced_fields(body: str) -> str:
    """A table separated by runs of spaces, its fields separated by ``FIELD_SEPARATOR``."""
    return "\n".join(FIELD_SEPARATOR.join(line.split()) for line in LINE_BREAK.split(body))


def _lines(text: str, start: int) -> list[tuple[int, str]]:
    """(offset, line) of the first lines from ``start``, blank ones included."""
    found: list[tuple[int, str]] = []
    position = start
    while position < len(text) and len(found) < MAX_TITLE_LINES + ROWS_BELOW_HEADER:
        end = LINE_BREAK.search(text, position)
        stop = end.start() if end else len(text)
        found.append((position, text[position:stop]))
        position = end.end() if end else len(text)
    return found


def _fields(line: str, delim: str) -> list[str]:
    if not delim:
        return [line]
    return next(csv.reader([line], delimiter=delim, quotechar='"', strict=False), [])


def _filled(line: str, delim: str) -> int:
    return sum(1 for f in _fields(line, delim) if f.strip(BLANKISH))


def _after_titles(text: str, lines: list[tuple[int, str]], filled: list[int], delim: str,
                  detect: bool) -> TableStart | None:
    """The table after title lines, when ``delim`` shows one plainly."""
    wide = _first_wide(filled)[0]
    titles = [line for (_, line), n in zip(lines[:wide], filled) if n]
    if any('"' in t for t in titles):
        return None   # a quoted field may span lines: the first line may be half a header
    # one title line right above a header: a spreadsheet's title row saved as text keeps
    # the table's delimiters ("Title;;;"), and a header of three or more names is no
    # line of a one-column list ("Smith, John")
    lone_title = any(delim in t for t in titles) or (wide < len(filled) and filled[wide] >= 3)
    header = header_index(filled, lone_title)
    if header is None:
        return None
    offset = lines[header][0]
    if detect and detect_delimiter(text[offset:offset + SNIFF_CHARS]) != delim:
        return None
    return TableStart(offset, delim, [shown_line(t) for t in titles])


def header_index(filled: list[int], lone_title: bool) -> int | None:
    """Which of a table's first rows is its header, given each row's count of non-blank
    cells, when title rows stand above it; None when the first non-blank row is.

    Title rows hold one non-blank cell; the header is the first row holding two or more,
    within ``MAX_TITLE_LINES``, with rows of two or more below it. One title row right
    above the header counts only where ``lone_title`` says the layout shows it."""
    first = next((i for i, n in enumerate(filled) if n), None)
    if first is None or filled[first] >= 2:
        return None
    header = next((i for i in range(first, min(len(filled), MAX_TITLE_LINES))
                   if filled[i] >= 2), None)
    if header is None:
        return None
    titles = sum(1 for n in filled[first:header] if n)
    if not (titles >= 2 or filled[header - 1] == 0 or lone_title):
        return None
    below = [n for n in filled[header + 1:header + 1 + ROWS_BELOW_HEADER] if n]
    if not below or sum(n >= 2 for n in below) < len(below) / 2:
        return None   # a header with no rows of its width below it is no table
    return header


def note_lines_below(text: str, delim: str) -> tuple[int, list[str]]:
    """Where the note lines below the data begin (``len(text)`` if none), and them."""
    if not delim:
        return len(text), []
    base = max(0, len(text) - SNIFF_CHARS)   # notes are short: read the end alone
    tail = text[base:]
    end = len(tail)
    notes: list[str] = []
    cut = len(tail)
    while len(notes) <= MAX_NOTE_LINES:
        while end and tail[end - 1] in "\r\n":
            end -= 1
        if not end:
            break
        start = max(tail.rfind("\n", 0, end), tail.rfind("\r", 0, end)) + 1
        line = tail[start:end]
        if line.strip(BLANKISH) and (delim in line or '"' in line
                                     or not any(c.isalpha() for c in line)):
            break
        if line.strip(BLANKISH):
            notes.append(line)
            cut = start
        end = start
    if not notes or len(notes) > MAX_NOTE_LINES or (base and cut == 0):
        return len(text), []
    return base + cut, [shown_line(n) for n in reversed(notes)]


def shown_line(line: str) -> str:
    line = line.strip()
    return line if len(line) <= SHOWN_CHARS else line[:SHOWN_CHARS] + "…"


def set_aside_notes(above: list[str] | tuple[str, ...], below: list[str] | tuple[str, ...]
                    ) -> list[str]:
    """The report's notes on lines set aside above the header and below the data."""
    found = []
    for lines, where in ((above, "above the header"), (below, "below the data")):
        if lines:
            shown = " | ".join(repr(line) for line in lines)
            found.append(f"{len(lines)} line(s) {where} set aside, not read as rows: {shown}")
    return found
