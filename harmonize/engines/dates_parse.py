"""Reading one written date, date-time or time into its parts, without deciding anything.

``parse`` turns a raw string into a ``Parsed`` record: the components as written and
whether their order is fixed by the shape (ISO 8601, a month name, a four-digit year
first) or left open (``03/04/2024``). ``reading`` then gives the calendar date under an
order and a two-digit-year rule. The column-level choice of order lives in ``dates``.
Each distinct string is parsed once (``parse`` is cached).
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass
from datetime import date, datetime, timedelta
from functools import lru_cache

from harmonize.engines.dates_words import (
    fold_period,
    fold_word,
    is_filler,
    month_table,
    ordinal_pattern,
    period_table,
    weekday_table,
    word_clock_pattern,
    word_list,
)

ORDERS = ("DMY", "MDY", "YMD")

# Forms of a parsed value.
FIXED = "fixed"      # calendar date whose field order the shape fixes: parts = (y, m, d)
OPEN = "open"        # numeric date whose order is a column decision: parts = (a, b, c)
WEEK = "week"        # ISO 8601 week date: parts = (year, week, weekday)
ORDINAL = "ordinal"  # ISO 8601 ordinal date: parts = (year, day of year)
MONTH = "month"      # a month of a year, no day: parts = (year, month); widths in the
                     # order written ((4, 2) for 2024-05, (2, 4) for 05/2024); sep "" for
                     # a month name
TIME = "time"        # a time of day alone
DIGITS = "digits"    # a bare number: a date only if the column says so (serial, epoch, 20240403)
ZERO = "zero"        # all components zero (0000-00-00): a sentinel, not a date
BAD = "bad"          # not readable as a date; ``reason`` says why


@dataclass(frozen=True, slots=True)
class Clock:
    hour: int
    minute: int
    second: int
    fraction: str = ""          # digits after the decimal mark, as written
    offset: str | None = None   # "+HH:MM" as written (Z and UTC give "+00:00")
    zone: str | None = None     # a zone abbreviation as written (EST): never turned into an offset

    def text(self) -> str:
        frac = f".{self.fraction}" if self.fraction else ""
        return f"{self.hour:02d}:{self.minute:02d}:{self.second:02d}{frac}{self.offset or ''}"


@dataclass(frozen=True, slots=True)
class Parsed:
    form: str
    parts: tuple[int, ...] = ()
    widths: tuple[int, ...] = ()   # digit counts (a two-digit year needs the century rule)
    clock: Clock | None = None
    weekday: int | None = None     # ISO weekday named beside the date, checked against it
    text: str = ""                 # DIGITS: the number as written
    reason: str = ""               # BAD: why
    sep: str = ""                  # OPEN: the separator between the numbers ("/", ".", "-")

    @property
    def has_date(self) -> bool:
        return self.form in (FIXED, OPEN, WEEK, ORDINAL)


def bad(reason: str) -> Parsed:
    return Parsed(BAD, reason=reason)


_SPACES = re.compile(r"[\s\u00a0\u202f]+")
_DOT_SPACE = re.compile(r"(?<=\d)\.\s+(?=\d)")
_ISO = re.compile(r"(\d{4})-(\d{2})-(\d{2})(?:[Tt ](\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?"
                  r" ?([Zz]|[+-]\d{2}(?::?\d{2})?)?)?")
_ISO_BASIC = re.compile(r"(\d{4})(\d{2})(\d{2})[Tt](\d{2})(\d{2})(\d{2})?(?:[.,](\d{1,9}))?"
                        r"([Zz]|[+-]\d{2}(?:\d{2})?)?")
_WEEK = re.compile(r"(\d{4})-?[Ww](\d{2})-?([1-7])")
_ORDINAL = re.compile(r"(\d{4})-(\d{3})")
_DIGITS = re.compile(r"\d+(?:[.,]\d+)?")
_NUMERIC = re.compile(r"(\d{1,4})([/.\- ])(\d{1,4})\2(\d{1,4})\.?")
_PAIR = re.compile(r"(\d{1,4})([/.\-])(\d{1,4})\.?")
_CLOCK = re.compile(r"(?<![\d:])(\d{1,2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?(?![\d:])"
                    r"|(?<![\d:])(\d{1,2})[hH](\d{2})(?![\d:])")
_HOUR_PERIOD = re.compile(r"(?<![\d:./-])(\d{1,2}) ?([ap]\.? ?m\.?)(?![^\W\d_])", re.IGNORECASE)
_OFFSET_TAIL = re.compile(r"(?:\b(?:utc|gmt|ut) ?)?([+-])(\d{1,2})(?::?(\d{2}))?$", re.IGNORECASE)
_WORD_TAIL = re.compile(r"([^\W\d_]+)$")
_LAST_WORD = re.compile(r"([^\W\d_][^\s\d]*)\s*$")
_TRAILING_YEAR = re.compile(r"(.*?)\s*(?<!\d)(\d{4})\s*")
_TRAILING_T = re.compile(r"(?<=\d)[Tt]\s*$")
_TOKENS = re.compile(r"\d+|[^\W\d_]+(?:-[^\W\d_]+)*")   # 'quarta-feira' is one word
# Year, month and day marked by 年月日 (ja, zh) or 년월일 (ko): CLDR long patterns
_CJK_DATE = re.compile(r"(\d{2,4})\s*[年년]\s*(\d{1,2})\s*[月월]\s*(\d{1,2})\s*[日일]")
# '15 h 45', '15 h 45 min 00 s' (fr_CA CLDR time patterns)
_SPACED_H = re.compile(r"(?<![\d:])(\d{1,2}) h (\d{2})(?: min (\d{2}) s)?(?![\d:])")
# a time written with dots after a complete date: '3.4.2024 15.45' (fi, da), 'klo 15.45'
_DOTTED_CLOCK = re.compile(r"(.*?\S)[ ,]+(?:klo |kl\.? )?(\d{1,2})\.(\d{2})(?:\.(\d{2}))?")


class _DigitFold(dict[int, str]):
    """``str.translate`` table, filled as characters are met: digits of every script
    (Unicode category Nd: Arabic-Indic, Persian, Devanagari, full-width, ...) become the
    ASCII digit of the same value (``unicodedata.decimal``, UnicodeData.txt field 6), and
    full-width forms U+FF01-U+FF5E ("－", "：", "／") the ASCII character they widen
    (UnicodeData.txt <wide> decompositions), as the numbers engine reads them."""

    def __missing__(self, code: int) -> str:
        char = chr(code)
        value = unicodedata.decimal(char, None) if code >= 0x80 else None
        if value is not None:
            found = str(value)
        elif 0xFF01 <= code <= 0xFF5E:
            found = chr(code - 0xFEE0)
        else:
            found = char
        self[code] = found
        return found


DIGIT_FOLD = _DigitFold()


def fold_digits(text: str) -> str:
    """``DIGIT_FOLD`` applied: '٢٠٢٤-٠٥-٠٢' -> '2024-05-02' (ASCII text is returned as is)."""
    return text if text.isascii() else text.translate(DIGIT_FOLD)


def normalise(raw: str) -> str:
    text = _SPACES.sub(" ", fold_digits(raw)).strip()
    if "h" in text:
        text = _SPACED_H.sub(_colon_clock, text)
    if not text.isascii():
        text = _CJK_DATE.sub(r"\1-\2-\3 ", text).strip()
    return text


def _colon_clock(m: re.Match[str]) -> str:
    return f"{m[1]}:{m[2]}" + (f":{m[3]}" if m[3] else "")


@lru_cache(maxsize=1 << 17)
def parse(raw: str) -> Parsed:
    """Parse one value as written (cached: each distinct string is read once)."""
    text = normalise(raw)
    if not text:
        return bad("empty")
    for reader in (_read_iso, _read_iso_basic, _read_week, _read_ordinal):
        found = reader(text)
        if found is not None:
            return found
    if _DIGITS.fullmatch(text):
        return Parsed(DIGITS, text=text.replace(",", "."))
    date_text, clock = _split_clock(text)
    if isinstance(clock, str):
        return bad(clock)
    if not date_text.strip(" ,;@-"):
        return Parsed(TIME, clock=clock) if clock else bad("no date or time")
    found = _read_date_text(date_text)
    if found.form == BAD and clock is None:
        found, clock = _with_dotted_clock(text, found)
    if found.form == BAD or clock is None:
        return found
    if found.form == MONTH:
        return bad("a time of day beside a month without a day")
    return Parsed(found.form, found.parts, found.widths, clock, found.weekday, sep=found.sep)


def _with_dotted_clock(text: str, failed: Parsed) -> tuple[Parsed, Clock | None]:
    """A date followed by a time written with dots, else the first failure unchanged."""
    m = _DOTTED_CLOCK.fullmatch(text)
    if not m:
        return failed, None
    found = _read_date_text(m[1])
    clock = _clock_from(m[2], m[3], m[4], None, None) if found.form != BAD else None
    if not isinstance(clock, Clock):
        return failed, None
    return found, clock


def _clock_from(h: str, mi: str, s: str | None, frac: str | None,
                offset: str | None) -> Clock | str:
    hour, minute, second = int(h), int(mi), int(s or 0)
    if hour > 23 or minute > 59 or second > 60 or (second == 60 and minute != 59):
        return f"time {h}:{mi}{':' + s if s else ''} is not a time of day"
    norm = normal_offset(offset) if offset else None
    if offset and norm is None:
        return f"UTC offset {offset!r} is out of range"
    return Clock(hour, minute, second, frac or "", norm)


def normal_offset(written: str) -> str | None:
    """'Z' -> '+00:00', '+0400' / '+04' -> '+04:00'; None when out of range."""
    if written.casefold() in word_list("utc"):
        return "+00:00"
    match = re.fullmatch(r"(?:(?:utc|gmt|ut) ?)?([+-])(\d{1,2})(?::?(\d{2}))?", written,
                         re.IGNORECASE)
    if not match:
        return None
    hours, minutes = int(match[2]), int(match[3] or 0)
    if hours > 18 or minutes > 59:
        return None
    return f"{match[1]}{hours:02d}:{minutes:02d}"


def _read_iso(text: str) -> Parsed | None:
    m = _ISO.fullmatch(text)
    if not m:
        return None
    parts = (int(m[1]), int(m[2]), int(m[3]))
    if parts == (0, 0, 0):
        return Parsed(ZERO, parts, (4, 2, 2))
    if m[4] is None:
        return Parsed(FIXED, parts, (4, 2, 2))
    clock = _clock_from(m[4], m[5], m[6], m[7], m[8])
    return bad(clock) if isinstance(clock, str) else Parsed(FIXED, parts, (4, 2, 2), clock)


def _read_iso_basic(text: str) -> Parsed | None:
    m = _ISO_BASIC.fullmatch(text)
    if not m:
        return None
    clock = _clock_from(m[4], m[5], m[6], m[7], m[8])
    parts = (int(m[1]), int(m[2]), int(m[3]))
    return bad(clock) if isinstance(clock, str) else Parsed(FIXED, parts, (4, 2, 2), clock)


def _read_week(text: str) -> Parsed | None:
    m = _WEEK.fullmatch(text)
    return Parsed(WEEK, (int(m[1]), int(m[2]), int(m[3])), (4, 2, 1)) if m else None


def _read_ordinal(text: str) -> Parsed | None:
    m = _ORDINAL.fullmatch(text)
    return Parsed(ORDINAL, (int(m[1]), int(m[2])), (4, 3)) if m else None


def _split_clock(text: str) -> tuple[str, Clock | str | None]:
    """The text left once a time of day is taken out, and that time (or why it is bad)."""
    m = _CLOCK.search(text)
    if m:
        if m[1] is not None:
            h, mi, s, frac = m[1], m[2], m[3], m[4]
        else:
            h, mi, s, frac = m[5], m[6], None, None
        tail = text[m.end():]
        before = text[:m.start()]
    else:
        m = _HOUR_PERIOD.search(text)
        if not m:
            return _word_clock(text)
        h, mi, s, frac = m[1], "00", None, None
        tail = m[2] + text[m.end():]
        before = text[:m.start()]
    period, offset, zone, problem = _read_tail(tail)
    year = _TRAILING_YEAR.fullmatch(tail) if problem else None
    if year:   # 'Thu May 02 14:30:00 CEST 2024' (C asctime, a zone between): the year
        period, offset, zone, problem = _read_tail(year[1])   # goes with the date
        before = f"{before} {year[2]}"
    if problem:
        return text, problem
    if period is None and 1 <= int(h) <= 12:   # '오후 2:30', '上午 6:43' (CLDR ko, zh_Hant)
        before, period = _leading_period(before)
    hour = int(h)
    if period:
        if not 1 <= hour <= 12 and not (hour == 0 and period == "am"):
            return text, f"hour {hour} with {period.upper()} is not a 12-hour clock time"
        hour = hour % 12 + (12 if period == "pm" else 0)
    clock = _clock_from(str(hour), mi, s, frac, offset)
    if isinstance(clock, Clock) and zone:
        clock = Clock(clock.hour, clock.minute, clock.second, clock.fraction, clock.offset, zone)
    return before, clock


def _leading_period(before: str) -> tuple[str, str | None]:
    """An am/pm word written just before the time, taken out of the text before it."""
    m = _LAST_WORD.search(before)
    if m and len(fold_period(m[1])) > 1 and not is_filler(fold_word(m[1])):
        period = period_table().get(fold_period(m[1]))   # not 'a' nor 'am' ('am 3. Mai')
        if period:
            return before[:m.start()], period
    return before, None


def _word_clock(text: str) -> tuple[str, Clock | str | None]:
    """A time of day a word marks ('14.30 Uhr', 'klo 14.30'), taken out of the text."""
    m = word_clock_pattern().search(text)
    if not m:
        return text, None
    h, mi, s = (m[1], m[2], m[3]) if m[1] is not None else (m[4], m[5], m[6])
    rest = (text[:m.start()] + " " + text[m.end():]).strip()
    return rest, _clock_from(h, mi or "00", s, None, None)


def _read_tail(tail: str) -> tuple[str | None, str | None, str | None, str | None]:
    """(am/pm, offset, zone abbreviation, problem) from the text after a time."""
    rest = tail.strip()
    offset = zone = None
    m = _OFFSET_TAIL.search(rest)
    if m and (m.start() == 0 or not rest[m.start() - 1].isalnum() or rest[:m.start()].casefold()
              .rstrip().endswith(("utc", "gmt", "ut"))):
        offset = rest[m.start():].strip()
        rest = rest[:m.start()].strip()
    m = _WORD_TAIL.search(rest)
    if m and offset is None:
        word = m[1].casefold()
        if word in word_list("utc"):
            offset, rest = "Z", rest[:m.start()].strip()
        elif word in word_list("zones"):
            zone, rest = m[1].upper(), rest[:m.start()].strip()
    period = None
    if rest:
        folded = fold_period(rest)
        if folded in period_table():
            period = period_table()[folded]
        elif not all(is_filler(fold_word(w)) for w in rest.split()):
            return None, None, None, f"unread text {rest!r} after the time"
    return period, offset, zone, None


def _read_date_text(text: str) -> Parsed:
    text = _DOT_SPACE.sub(".", _TRAILING_T.sub("", text).strip(" ,;@-"))
    m = _NUMERIC.fullmatch(text)
    if m:
        return _numeric(m[1], m[3], m[4], m[2])
    m = _PAIR.fullmatch(text)
    if m:
        return _pair(m[1], m[3], m[2])
    return _read_words(ordinal_pattern().sub(r"\1", text))


def _pair(first: str, second: str, sep: str) -> Parsed:
    """Two numbers: a month of a year when one has four digits ('05/2024', '2024-05'),
    else a day and a month whose year is missing."""
    if len(first) == 4 and len(second) <= 2:
        return Parsed(MONTH, (int(first), int(second)), (4, len(second)), sep=sep)
    if len(second) == 4 and len(first) <= 2:
        return Parsed(MONTH, (int(second), int(first)), (len(first), 4), sep=sep)
    if len(first) == 4 or len(second) == 4:
        return bad("not a date: a component has too many digits")
    return bad("day and month without a year")


def _numeric(a: str, b: str, c: str, sep: str = " ") -> Parsed:
    widths = (len(a), len(b), len(c))
    if max(widths) > 4:   # no day, month or year has five digits (nor thousands of them)
        return bad("not a date: a component has too many digits")
    parts = (int(a), int(b), int(c))
    if parts == (0, 0, 0):
        return Parsed(ZERO, parts, widths)
    if widths[0] == 4:
        if widths[1] > 2 or widths[2] > 2:
            return bad("not a date: a component has too many digits")
        return Parsed(FIXED, parts, widths)
    if 3 in widths or widths[1] > 2 or (widths[2] == 4 and widths[0] > 2):
        return bad("not a date: components have 3 digits")
    return Parsed(OPEN, parts, widths, sep=sep)


def _read_words(text: str) -> Parsed:
    numbers: list[tuple[int, str]] = []   # (token position, digits)
    months: list[tuple[int, str]] = []
    weekday = None
    for position, token in enumerate(_TOKENS.findall(text)):
        if token.isdigit():
            numbers.append((position, token))
            continue
        word = fold_word(token)
        if word in month_table():
            months.append((position, word))
        elif word in weekday_table():
            weekday = weekday_table()[word] or weekday
        elif not is_filler(word):
            return bad(f"unknown word {token!r}")
    if len(months) > 1:  # 'mar' is also a French weekday (mardi)
        as_weekday = [w for _, w in months if w in weekday_table()]
        months = [(p, w) for p, w in months if w not in weekday_table()]
        if as_weekday and weekday is None:
            weekday = weekday_table()[as_weekday[0]]
    if len(months) > 1:
        return bad("more than one month name")
    if not months:
        if len(numbers) == 3:
            found = _numeric(*(digits for _, digits in numbers))
            return Parsed(found.form, found.parts, found.widths, weekday=weekday,
                          sep=found.sep) \
                if found.form != BAD else found
        return bad("no month and no numeric date")
    month_position, word = months[0]
    return _with_month_name(month_table()[word], month_position, numbers, weekday)


def _with_month_name(month: int, at: int, numbers: list[tuple[int, str]],
                     weekday: int | None) -> Parsed:
    years = [d for _, d in numbers if len(d) == 4]
    short = [(p, d) for p, d in numbers if len(d) <= 2]
    if len(years) + len(short) != len(numbers) or len(years) > 1:
        return bad("a number beside the month name is neither a day nor a year")
    if years:
        if not short and weekday is None:   # 'May 2024', 'mai 2024'
            return Parsed(MONTH, (int(years[0]), month), (2, 4), sep="")
        if len(short) != 1:
            return bad("a weekday beside a month without a day" if not short
                       else "two day numbers")
        return Parsed(FIXED, (int(years[0]), month, int(short[0][1])), (4, 2, 2), weekday=weekday)
    if len(short) == 1:
        return bad("day and month without a year")
    if len(short) != 2:
        return bad("month name without a day")
    (p1, d1), (p2, d2) = short
    if p1 < at < p2 or at < p1:   # '5 March 24' or 'March 5, 24': the day comes first
        day, year = d1, d2
    else:
        return bad("cannot tell the day from the two-digit year")
    if len(year) != 2:
        return bad("a one-digit year")
    return Parsed(FIXED, (int(year), month, int(day)), (2, 2, len(day)), weekday=weekday)


# ---------------------------------------------------------------- readings

def full_year(year: int, width: int, year_from: int) -> int:
    """A two-digit year placed in the 100 years starting at ``year_from``."""
    if width > 2:
        return year
    return year_from + (year - year_from) % 100


def calendar_date(y: int, m: int, d: int) -> date | None:
    try:
        return date(y, m, d)
    except ValueError:
        return None


def fields_under(p: Parsed, order: str) -> tuple[int, int, int, int] | None:
    """(year, month, day, year width) of an OPEN value read in ``order``, if the widths fit."""
    a, b, c = p.parts
    wa, wb, wc = p.widths
    if order == "DMY":
        y, m, d, wy, wo = c, b, a, wc, max(wa, wb)
    elif order == "MDY":
        y, m, d, wy, wo = c, a, b, wc, max(wa, wb)
    else:
        y, m, d, wy, wo = a, b, c, wa, max(wb, wc)
    if wy not in (2, 4) or wo > 2:
        return None
    return y, m, d, wy


@lru_cache(maxsize=1 << 18)
def reading(p: Parsed, order: str | None, year_from: int) -> date | None:
    """The calendar date ``p`` names under ``order`` (needed for OPEN values only; cached:
    a column's decision asks for each distinct value's readings several times)."""
    if p.form == FIXED:
        y, m, d = p.parts
        found = calendar_date(full_year(y, p.widths[0], year_from), m, d)
    elif p.form == OPEN:
        fields = fields_under(p, order) if order else None
        if fields is None:
            return None
        y, m, d, wy = fields
        found = calendar_date(full_year(y, wy, year_from), m, d)
    elif p.form == WEEK:
        try:
            found = date.fromisocalendar(*p.parts)
        except ValueError:
            return None
    elif p.form == ORDINAL:
        year, day = p.parts
        valid = 1 <= day <= 366 and 1 <= year <= 9999  # datetime's range; year 0 is not
        found = date(year, 1, 1) + timedelta(days=day - 1) if valid else None
        if found is not None and found.year != year:
            return None
    else:
        return None
    if found is not None and p.weekday is not None and found.isoweekday() != p.weekday:
        return None
    return found


def plausible_under(p: Parsed, order: str) -> bool:
    """Whether an OPEN value fits ``order`` by ranges alone (day 1-31, month 1-12)."""
    fields = fields_under(p, order)
    return fields is not None and 1 <= fields[1] <= 12 and 1 <= fields[2] <= 31


def month_text(p: Parsed) -> str | None:
    """'YYYY-MM' (ISO 8601 reduced precision, a calendar month) of a MONTH value, or None
    when there is no such month."""
    year, month = p.parts
    return f"{year:04d}-{month:02d}" if 1 <= month <= 12 and 1 <= year <= 9999 else None


def render(day: date, clock: Clock | None) -> str:
    return day.isoformat() if clock is None else f"{day.isoformat()}T{clock.text()}"


# ---------------------------------------------------------------- bare numbers

EXCEL_1900 = date(1899, 12, 30)   # serial 61 = 1900-03-01 (ECMA-376 Part 4 §3.17.4.1)
EXCEL_1904 = date(1904, 1, 1)     # serial 0 = 1904-01-01
UNIX_EPOCH = datetime(1970, 1, 1)


def serial_date(serial: int, system: str) -> date | str:
    """A spreadsheet serial day number as a date, or why it is not one."""
    if system == "serial1904":
        return EXCEL_1904 + timedelta(days=serial)
    if serial < 1:
        return f"serial {serial} comes before 1900-01-01, the first day of the 1900 system"
    if serial == 60:
        return "serial 60 is 1900-02-29, a day that does not exist (the 1900 system's leap day)"
    return EXCEL_1900 + timedelta(days=serial + (1 if serial < 60 else 0))


def clock_of_day_fraction(fraction: str) -> Clock:
    """Time of day from the fraction of a serial day, to the nearest second."""
    seconds = round(float(f"0.{fraction}") * 86400)
    seconds = min(seconds, 86399)
    return Clock(seconds // 3600, seconds // 60 % 60, seconds % 60)


def digits_reading(text: str, mode: str, with_time: bool) -> str | None | tuple[str]:
    """ISO text for a bare number under ``mode``; a 1-tuple holds why it cannot be read."""
    whole, _, fraction = text.partition(".")
    fraction = fraction.rstrip("0")
    if mode in ("serial1900", "serial1904"):
        day = serial_date(int(whole), mode)
        if isinstance(day, str):
            return (day,)
        clock = clock_of_day_fraction(fraction) if fraction or with_time else None
        return render(day, clock)
    if mode in ("unix_seconds", "unix_milliseconds"):
        return _epoch_text(whole, fraction, mode)
    return None


def _epoch_text(whole: str, fraction: str, mode: str) -> str | tuple[str]:
    digits = int(whole)
    if mode == "unix_milliseconds":
        digits, millis = divmod(digits, 1000)
        fraction = (f"{millis:03d}" + fraction).rstrip("0") if millis or fraction else ""
    try:
        moment = UNIX_EPOCH + timedelta(seconds=digits)
    except OverflowError:
        return ("beyond the calendar",)
    frac = f".{fraction}" if fraction else ""
    return f"{moment.isoformat()}{frac}+00:00"


def compact_parse(text: str) -> Parsed:
    """A digit string read as a compact date: 8 digits YYYYMMDD (ISO 8601 basic) or 6
    digits with the order open (YYMMDD or DDMMYY). Seven digits are never read: ISO 8601's
    basic ordinal date (YYYYDDD) is too rare beside the 7-digit numbers a column holds
    (references, amounts, the engine's own output of a text column), and reading one as a
    date would not leave harmonised output unchanged when harmonised again."""
    if len(text) == 8 and text.isdigit():
        return Parsed(FIXED, (int(text[:4]), int(text[4:6]), int(text[6:])), (4, 2, 2))
    if len(text) == 6 and text.isdigit():
        return Parsed(OPEN, (int(text[:2]), int(text[2:4]), int(text[4:])), (2, 2, 2), sep="")
    return bad("not a compact date")
