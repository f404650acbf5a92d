"""Hypothesis strategies for the cell strings harmonize meets, shared by the tests.

The shapes follow what regional exports hold: dates in every order and separator with
month names in several languages, amounts with either decimal mark and any grouping,
quantities with unit symbols and words, phones in national and international style,
missing-value and boolean words, identifiers, formula payloads and Unicode junk. The
values are generated, not taken from any real data set.
"""

from __future__ import annotations

import string
import unicodedata

import pandas as pd
from hypothesis import strategies as st

# Month names: English, German, French, Spanish (CLDR wide/abbreviated forms, from memory)
MONTHS = (
    "January", "Feb", "March", "Apr.", "mai", "Juni", "juillet", "août", "Sept", "Okt",
    "noviembre", "Dezember", "déc.", "MÄRZ",
)
UNITS = (
    "kg", "g", "lb", "lbs", "oz", "t", "m", "cm", "mm", "km", "ft", "in", '"', "mi", "L",
    "l", "ml", "gal", "°C", "°F", "K", "m²", "sq ft", "km/h", "mph", "Kilogramm", "pounds",
    "µg", "Ｋｇ",
)
CURRENCIES = ("€", "$", "£", "CHF", "EUR", "USD", "₹", "¥", "zł")
MISSING = ("", " ", "N/A", "n/a", "NA", "-", "--", "null", "NULL", "None", "nan", "#N/A",
           "?", "k.A.", "—")
BOOLEANS = ("yes", "no", "Y", "N", "true", "FALSE", "ja", "nein", "oui", "non", "sí", "1",
            "0", "✓", "x")
FORMULAS = ("=1+1", "=HYPERLINK(\"http://example.invalid\",\"x\")", "+cmd|' /C calc'!A0",
            "-2+3", "@SUM(A1:A9)", "\t=1", "\r=1", "=-1", "-", "+", "@")
SEPARATORS = ("/", ".", "-", " ", ". ", "")
SPACES = (" ", "\u00a0", "\u202f", "\t", "")

digits = st.text(string.digits, min_size=1, max_size=12)


@st.composite
def dates(draw: st.DrawFn) -> str:
    """Numeric or named dates in any order, optionally with a time."""
    day, month = draw(st.integers(0, 35)), draw(st.integers(0, 14))
    year = draw(st.sampled_from([draw(st.integers(0, 99)), draw(st.integers(1, 9999))]))
    sep = draw(st.sampled_from(SEPARATORS))
    pad = draw(st.booleans())
    parts = [f"{day:02d}" if pad else str(day), f"{month:02d}" if pad else str(month), str(year)]
    if draw(st.booleans()):
        parts[1] = draw(st.sampled_from(MONTHS))
    order = draw(st.permutations(parts))
    text = sep.join(order)
    if draw(st.integers(0, 3)) == 0:
        hour, minute = draw(st.integers(0, 25)), draw(st.integers(0, 61))
        tail = draw(st.sampled_from(["", ":07", ".5", " PM", "Z", "+05:30", "-0800"]))
        text += draw(st.sampled_from(["T", " "])) + f"{hour:02d}:{minute:02d}{tail}"
    return text


@st.composite
def amounts(draw: st.DrawFn) -> str:
    """Numbers with random decimal and grouping marks, signs and currency."""
    whole = draw(st.integers(0, 10**12))
    group = draw(st.sampled_from([",", ".", " ", "'", "\u00a0", "\u202f", ""]))
    decimal = draw(st.sampled_from([".", ",", "·"]))
    text = f"{whole:,}".replace(",", group) if group else str(whole)
    if draw(st.booleans()):
        text += decimal + draw(digits)
    if draw(st.integers(0, 5)) == 0:
        text += draw(st.sampled_from(["e3", "E-2", "e+10", "%", "‰", "k", "Mio."]))
    sign = draw(st.sampled_from(["", "", "-", "+", "\u2212", "(", "-"]))
    text = f"({text})" if sign == "(" else sign + text
    if draw(st.integers(0, 3)) == 0:
        currency = draw(st.sampled_from(CURRENCIES))
        space = draw(st.sampled_from(SPACES))
        text = currency + space + text if draw(st.booleans()) else text + space + currency
    return text


@st.composite
def quantities(draw: st.DrawFn) -> str:
    value = draw(amounts())
    unit = draw(st.sampled_from(UNITS))
    text = value + draw(st.sampled_from(SPACES)) + unit
    if draw(st.integers(0, 4)) == 0:  # compound forms: 5 ft 11 in, 1 lb 3 oz
        text += " " + draw(digits) + " " + draw(st.sampled_from(UNITS))
    return text


@st.composite
def phones(draw: st.DrawFn) -> str:
    prefix = draw(st.sampled_from(["", "+", "00", "0", "+1 ", "+44 (0)", "+49 ", "(0)", "tel: "]))
    groups = draw(st.lists(st.text(string.digits, min_size=1, max_size=5), min_size=1, max_size=5))
    sep = draw(st.sampled_from([" ", "-", ".", "", "/"]))
    text = prefix + sep.join(groups)
    if draw(st.integers(0, 4)) == 0:
        text += draw(st.sampled_from([" ext. ", " x", "#", " Durchwahl "])) + draw(digits)
    return text


unicode_junk = st.text(
    alphabet=st.characters(blacklist_categories=("Cs",)), min_size=0, max_size=40
)
words = st.text(string.ascii_letters + "äöüéèçßøåñ -'", min_size=1, max_size=20)
identifiers = st.one_of(
    digits.map(lambda d: "0" + d),
    st.tuples(st.sampled_from(["INV-", "A", "SKU ", "#", ""]), digits).map("".join),
)

cells = st.one_of(
    dates(),
    amounts(),
    quantities(),
    phones(),
    st.sampled_from(MISSING),
    st.sampled_from(BOOLEANS),
    st.sampled_from(FORMULAS),
    identifiers,
    words,
    unicode_junk,
)
"""Any cell text at all."""

FAMILIES = (dates(), amounts(), quantities(), phones(), st.sampled_from(BOOLEANS), identifiers,
            words)


@st.composite
def column_values(draw: st.DrawFn, max_size: int = 25) -> list[str]:
    """A column: mostly one family (so an engine claims it), some noise and gaps."""
    family = draw(st.sampled_from(FAMILIES))
    main = draw(st.lists(family, min_size=1, max_size=max_size))
    noise = draw(st.lists(cells, max_size=3))
    blanks = draw(st.lists(st.sampled_from(MISSING), max_size=3))
    return draw(st.permutations(main + noise + blanks))


@st.composite
def frames(draw: st.DrawFn, max_columns: int = 4, max_rows: int = 25) -> pd.DataFrame:
    """A table of text, sometimes with a country column that engines may split by."""
    columns = draw(st.lists(column_values(max_rows), min_size=1, max_size=max_columns))
    rows = max(len(c) for c in columns)
    data = {f"col{i}": [*c, *[""] * (rows - len(c))] for i, c in enumerate(columns)}
    if draw(st.booleans()):
        countries = st.sampled_from(["DE", "United Kingdom", "France", "US", "Schweiz", "IN"])
        data["Country"] = draw(st.lists(countries, min_size=rows, max_size=rows))
    return pd.DataFrame(data, dtype=object)


# --------------------------------------------------------------------------
# Sharper columns for the idempotence properties (tests/test_reliability.py)

# Marks a reader takes one for another, and the invisible format characters (Unicode 15
# ch. 23.2) that slip into copied cells
LOOKALIKES = {".": ("·", ",", " ", "", "-"), ",": (".", "·", ""), "-": ("‐", "–", " ", "/"),
              "/": ("-", "."), " ": ("\u00a0", "\u202f", "  ", "\t", ""), ":": (".",)}
INVISIBLE = ("\u200b", "\u00ad", "\ufeff", "\u2060")


@st.composite
def lookalike(draw: st.DrawFn, text: str) -> str:
    """The same value as another export might write it: a mark swapped, the case changed,
    an invisible character slipped in, spaces around, another Unicode normal form."""
    for step in draw(st.lists(st.integers(0, 4), max_size=2)):
        if step == 0 and text:
            at = draw(st.integers(0, len(text) - 1))
            if text[at] in LOOKALIKES:
                text = text[:at] + draw(st.sampled_from(LOOKALIKES[text[at]])) + text[at + 1:]
        elif step == 1:
            text = draw(st.sampled_from([text.upper(), text.lower(), text.title()]))
        elif step == 2:
            at = draw(st.integers(0, len(text)))
            text = text[:at] + draw(st.sampled_from(INVISIBLE)) + text[at:]
        elif step == 3:
            text = draw(st.sampled_from(SPACES)) + text + draw(st.sampled_from(SPACES))
        else:
            text = unicodedata.normalize(draw(st.sampled_from(["NFD", "NFKC"])), text)
    return text


@st.composite
def lookalike_columns(draw: st.DrawFn) -> list[str]:
    """Values of one family, each beside look-alike variants of itself, and some noise."""
    family = draw(st.sampled_from(FAMILIES))
    values = []
    for value in draw(st.lists(family, min_size=2, max_size=8)):
        values.append(value)
        values += [draw(lookalike(value)) for _ in range(draw(st.integers(0, 2)))]
    values += draw(st.lists(cells, max_size=4))
    return draw(st.permutations(values))


@st.composite
def sentinel_columns(draw: st.DrawFn) -> list[str]:
    """Amounts in one notation (one of them showing which mark is decimal), a run of nines
    among them, and noise that is not a number."""
    decimal, group = draw(st.sampled_from([(".", ","), (",", "."), (",", " "), (".", "'"),
                                           (".", "")]))
    affix = draw(st.sampled_from(["", "", "€ ", "USD ", " kg", " lb"]))

    def written(whole: int, cents: int | None, sign: str = "") -> str:
        text = f"{whole:,}".replace(",", group) + ("" if cents is None else f"{decimal}{cents:02d}")
        return f"{affix}{sign}{text}" if affix.endswith(" ") else f"{sign}{text}{affix}"

    amount = st.builds(written, st.integers(0, 10**7), st.none() | st.integers(0, 99),
                       st.sampled_from(["", "", "", "", "-"]))
    values = [written(draw(st.integers(0, 10**4)), draw(st.integers(1, 99)))]  # decides
    values += draw(st.lists(amount, min_size=4, max_size=20))
    nines = draw(st.sampled_from([99, 999, 9999, 99999]))
    sentinel = written(nines, draw(st.none() | st.just(0)), draw(st.sampled_from(["", "-"])))
    values += [sentinel] * draw(st.integers(1, 3))
    noise = st.one_of(words, st.sampled_from(FORMULAS), st.sampled_from(MISSING), dates())
    values += draw(st.lists(noise, max_size=3))
    return draw(st.permutations(values))


@st.composite
def tables(draw: st.DrawFn, columns: st.SearchStrategy[list[str]],
           max_columns: int = 2) -> pd.DataFrame:
    """A table of the given columns, sometimes with a country column."""
    drawn = draw(st.lists(columns, min_size=1, max_size=max_columns))
    rows = max(len(c) for c in drawn)
    data = {f"col{i}": [*c, *[""] * (rows - len(c))] for i, c in enumerate(drawn)}
    if draw(st.integers(0, 3)) == 0:
        countries = st.sampled_from(["DE", "United Kingdom", "France", "US"])
        data["Country"] = draw(st.lists(countries, min_size=rows, max_size=rows))
    return pd.DataFrame(data, dtype=object)


# --------------------------------------------------------------------------
# Checks shared by tests/test_fuzz.py and bench/fuzz.py


def engine_failures(values: list[str], country: list[str] | None = None) -> list[str]:
    """Run every engine's propose and convert on one column; describe what went wrong.

    Protocol (harmonize/engines/base.py): propose returns a Decision or None; convert,
    under the decision's convention and each group's, returns one text and one of
    CONVERTED / UNRESOLVED / PASSED per value, and the same answer for a value whether
    it comes alone or with others (a plan must apply the same to next month's data).
    """
    from harmonize.context import Context
    from harmonize.engines import ENGINES, FALLBACK
    from harmonize.evidence import TableEvidence
    from harmonize.options import Options

    data = {"value": values}
    if country is not None:
        data["Country"] = country
    table = TableEvidence.from_frame(pd.DataFrame(data, dtype=object), file="fuzz.csv")
    context = Context(table, Options())
    column = table.column("value")
    distinct = [str(v) for v in column.values]
    problems: list[str] = []
    for engine in [*ENGINES, FALLBACK]:
        try:
            decision = engine.propose(column, context)
        except Exception as exc:
            problems.append(f"{engine.name}.propose raised {type(exc).__name__}: {exc}")
            continue
        if decision is None:
            continue
        conventions = [dict(decision.convention)]
        if decision.groups is not None:
            conventions += [decision.groups.convention_for(decision.convention, label)
                            for label in decision.groups.conventions]
        for convention in conventions:
            problems += _convert_failures(engine, distinct, convention)
    return problems


def _convert_failures(engine: object, values: list[str], convention: dict) -> list[str]:
    from harmonize.engines.base import Outcome

    allowed = {Outcome.CONVERTED, Outcome.UNRESOLVED, Outcome.PASSED}
    name = engine.name  # type: ignore[attr-defined]
    # The dates engine sets sentinel dates (0/0/0, 00.00.0000) aside as MISSING with a
    # reason: a deliberate exception to the protocol, accepted when the reason is given.
    sentinel = Outcome.MISSING
    try:
        batch = engine.convert(values, convention)  # type: ignore[attr-defined]
    except Exception as exc:
        return [f"{name}.convert raised {type(exc).__name__}: {exc} on {values!r}"]
    if len(batch.text) != len(values) or len(batch.outcome) != len(values):
        return [f"{name}.convert gave {len(batch.text)} texts for {len(values)} values"]
    problems = []
    for i, value in enumerate(values):
        excused = batch.outcome[i] == sentinel and i in batch.reasons
        if (batch.outcome[i] not in allowed and not excused) or not isinstance(batch.text[i], str):
            problems.append(f"{name}.convert({value!r}) gave outcome {batch.outcome[i]!r}")
    for i, value in enumerate(values[:6]):  # alone vs in company: same answer
        alone = engine.convert([value], convention)  # type: ignore[attr-defined]
        if (alone.text[0], int(alone.outcome[0])) != (batch.text[i], int(batch.outcome[i])):
            problems.append(
                f"{name}.convert({value!r}) alone gives {alone.text[0]!r}"
                f" ({Outcome(alone.outcome[0]).label}), among others {batch.text[i]!r}"
                f" ({Outcome(batch.outcome[i]).label}); convention {convention!r}"
            )
    return problems


def reader_failure(path: object) -> str | None:
    """None when read_tables either reads the file or refuses it with a SourceError."""
    from harmonize.sources import SourceError, read_tables

    try:
        read_tables(path)  # type: ignore[arg-type]
    except SourceError as exc:
        if "\n" in str(exc):
            return f"SourceError spans lines: {exc!r}"
        return None
    except Exception as exc:
        return f"{type(exc).__name__}: {exc}"
    return None
