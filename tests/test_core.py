"""Evidence, missing values, identifiers, plans and the apply step, on DataFrames."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.apply import apply_table
from harmonize.decide import decide_table
from harmonize.engines.base import Outcome
from harmonize.engines.identifiers import IdentifierEngine
from harmonize.engines.missing import find_missing
from harmonize.evidence import ColumnEvidence, TableEvidence, most_frequent
from harmonize.options import Options
from harmonize.pipeline import harmonize_frame
from harmonize.plan import Plan, PlanError, dumps, loads


def column(values: list[str], name: str = "c") -> ColumnEvidence:
    return ColumnEvidence.from_series(name, 0, pd.Series(values, dtype=object))


class TestEvidence:
    def test_distinct_values_and_counts(self) -> None:
        col = column(["a", "b", "a", "", "a"])
        tally = dict(zip(col.values.tolist(), col.counts.tolist()))
        assert tally == {"a": 3, "b": 1, "": 1}
        assert col.total == 5
        assert [col.values[c] for c in col.codes] == ["a", "b", "a", "", "a"]

    def test_subset_keeps_row_order_with_gaps(self) -> None:
        col = column(["x", "N/A", "y", "x"])
        keep = col.values != "N/A"
        sub = col.subset(keep)
        assert sub.total == 3
        assert sub.codes.tolist()[1] == -1
        assert [sub.values[c] for c in sub.codes if c >= 0] == ["x", "y", "x"]

    def test_merge_adds_counts(self) -> None:
        merged = column(["a", "b"]).merge(column(["b", "c", "c"]))
        assert dict(zip(merged.values.tolist(), merged.counts.tolist())) == {
            "a": 1, "b": 2, "c": 2}
        assert merged.codes is None

    def test_by_group(self) -> None:
        col = column(["1", "2", "1", "3"])
        parts = col.by_group(np.array([0, 1, 0, -1]), 2)
        assert parts[0].values.tolist() == ["1"] and parts[0].counts.tolist() == [2]
        assert parts[1].values.tolist() == ["2"]


class TestMissing:
    @pytest.mark.parametrize("word", ["", "  ", "N/A", "n/a", "NA", "null", "NULL", "None",
                                      "-", "--", "?", "k.A.", "n.d.", "s.o.", "n.v.", "#N/A"])
    def test_words(self, word: str) -> None:
        rule = find_missing(column([word, "7"]))
        assert rule.mask(np.array([word], dtype=object)).all()

    def test_placeholder_emails(self) -> None:
        # RFC 2606 §2-3 reserves example.com/.net/.org and the .test, .example, .invalid
        # top-level domains for documentation and testing.
        values = ["a@example.com", "b@mail.example.org", "c@shop.invalid", "d@qmp-trade.biz"]
        rule = find_missing(column(values))
        assert rule.mask(np.array(values, dtype=object)).tolist() == [True, True, True, False]

    def test_sentinel_needs_the_column_to_show_it(self) -> None:
        heights = [str(v) for v in range(150, 200)] + ["-999"]
        assert "-999" in find_missing(column(heights)).tokens
        # common practice, no source: -999 among other negative numbers is a value
        balances = [str(v) for v in range(-1500, 1500, 50)] + ["-999"]
        assert "-999" not in find_missing(column(balances)).tokens

    def test_extra_words_from_options(self) -> None:
        rule = find_missing(column(["pending", "4"]), Options(missing_words=("Pending",)))
        assert "pending" in rule.tokens


class TestIdentifiers:
    def decide(self, values: list[str], name: str = "c"):
        table = TableEvidence.from_frame(pd.DataFrame({name: values}))
        from harmonize.context import Context
        return IdentifierEngine().propose(table.columns[0], Context(table))

    def test_leading_zeros(self) -> None:
        assert self.decide(["00123", "04567", "12345"]).kind == "identifier"

    def test_long_digit_strings(self) -> None:
        # IEEE 754 binary64 keeps 53 bits: 18-digit account numbers do not survive a float
        assert float("993237719993486486") != 993237719993486486
        assert self.decide(["993237719993486486", "618590134459644561"]) is not None

    def test_plain_amounts_are_not_identifiers(self) -> None:
        assert self.decide(["12", "1200", "45", "7"]) is None

    def test_header_and_fixed_width(self) -> None:
        assert self.decide(["1234", "5678", "9012"], name="Postcode") is not None

    def test_identifiers_kept_exactly(self) -> None:
        frame = pd.DataFrame({"Account number": ["007", "0420", "99"]})
        out, entry, _ = harmonize_frame(frame)
        assert out["Account number"].tolist() == ["007", "0420", "99"]
        assert entry["columns"][0]["kind"] == "identifier"


class TestPlan:
    def test_round_trip_and_edit(self) -> None:
        frame = pd.DataFrame({"Customer ID": ["007", "N/A"], "Town": [" Harrowdene", "x"]})
        table = decide_table(TableEvidence.from_frame(frame, "t.csv"))
        text = dumps(Plan([table], {"unresolved_fill": "empty"}))
        again = loads(text)
        assert [c.name for c in again.tables[0].columns] == ["Customer ID", "Town"]
        assert again.tables[0].columns[0].missing == ["n/a"]

    def test_errors_name_line_and_field(self) -> None:
        table = decide_table(TableEvidence.from_frame(pd.DataFrame({"a": ["1"]}), "t.csv"))
        text = dumps(Plan([table]))
        bad = text.replace("confidence = ", "confidence = 7 #")
        with pytest.raises(PlanError) as err:
            loads(bad, "p.toml")
        line = next(i for i, s in enumerate(bad.splitlines(), 1) if "confidence" in s)
        assert f"line {line}" in str(err.value) and "'confidence'" in str(err.value)

    def test_not_toml(self) -> None:
        with pytest.raises(PlanError, match="not a valid plan file"):
            loads("[[tables]\n", "p.toml")

    def test_toml_strings_survive(self) -> None:
        # TOML 1.0 basic strings: quotes, backslashes and control characters escaped
        from harmonize.plan import ColumnPlan, TablePlan
        odd = 'we"ird\\ \t na\x7fme ü'
        plan = Plan([TablePlan("f.csv", None, [ColumnPlan(odd, "text", "text", 0.5)])])
        assert loads(dumps(plan)).tables[0].columns[0].name == odd


def test_plan_rejects_unknown_kind() -> None:
    frame = pd.DataFrame({"Customer ID": ["007", "N/A"]})
    table = decide_table(TableEvidence.from_frame(frame, "t.csv"))
    text = dumps(Plan([table])).replace('kind = "identifier"', 'kind = "banana"')
    with pytest.raises(PlanError, match="unknown kind 'banana'"):
        loads(text, "p.toml")


cells = st.text(alphabet=st.sampled_from(list("0123456789.,-/ aAkgé€$:NnT+")), max_size=12)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(cells, cells, cells), min_size=1, max_size=30))
def test_every_cell_has_exactly_one_outcome(rows: list[tuple[str, str, str]]) -> None:
    frame = pd.DataFrame(rows, columns=["a", "b", "c"], dtype=object)
    evidence = TableEvidence.from_frame(frame)
    result = apply_table(evidence, decide_table(evidence))
    for col in result.columns:
        assert len(col.outcome) == len(frame)
        assert set(np.unique(col.outcome)) <= {int(o) for o in Outcome}
        assert sum(col.counts().values()) == len(frame)
        unresolved_rows = {cell["offset"] for cell in col.unresolved}
        assert unresolved_rows == set(np.nonzero(col.outcome == Outcome.UNRESOLVED)[0])


def test_why_lines_are_read_back() -> None:
    frame = pd.DataFrame({"Customer ID": ["007", "012"]})
    table = decide_table(TableEvidence.from_frame(frame, "t.csv"))
    again = loads(dumps(Plan([table])))
    assert again.tables[0].columns[0].evidence == table.columns[0].evidence
    assert again.tables[0].columns[0].evidence  # the identifier engine says why


@pytest.mark.parametrize(("file", "territory"), [
    # ISO 3166-1 alpha-2 codes and CLDR English names (via babel)
    ("branch_sales_uk.csv", "GB"), ("filiale_bestellungen_de.csv", "DE"),
    ("DE-orders.xlsx", "DE"), ("ventes France.csv", "FR"), ("sales_IT.csv", "IT"),
    ("sales_it.csv", "IT"), ("it_sales.csv", None), ("orders_in_march.csv", None),
    ("merged_ledger.csv", None)])
def test_territory_in_file_name(file: str, territory: str | None) -> None:
    from harmonize.context import territory_in_name
    assert territory_in_name(file) == territory


def test_all_zero_code_is_not_a_phone_placeholder() -> None:
    # common practice, no source: "000-000-0000" fills a phone field; "0000000" may be a code
    rule = find_missing(column(["0000000", "0012345"], name="Order ref"))
    assert "0000000" not in rule.tokens
    assert "000-000-0000" in find_missing(column(["000-000-0000", "x"], name="Ref")).tokens
    assert "0000000000" in find_missing(column(["0000000000", "x"], name="Phone")).tokens


def test_frame_api_reads_typed_columns() -> None:
    # Python's datetime and float repr as references: typed pandas columns are typed cells
    frame = pd.DataFrame({
        "when": pd.to_datetime(["2024-01-02", "2024-03-04", None]),
        "stamp": pd.to_datetime(["2024-01-02 10:00", "2024-01-03 11:30", None]).tz_localize(
            "UTC"),
        "amount": [1.5, 0.00001, np.nan],
        "paid": [True, False, True],
        "code": ["007", None, "012"],
    })
    out, entry, _ = harmonize_frame(frame)
    assert out["when"].tolist() == ["2024-01-02", "2024-03-04", ""]
    assert out["stamp"].tolist() == ["2024-01-02T10:00:00+00:00", "2024-01-03T11:30:00+00:00", ""]
    assert out["amount"].tolist() == ["1.5", "0.00001", ""]
    assert out["paid"].tolist() == ["true", "false", "true"]
    assert out["code"].tolist() == ["007", "", "012"]
    kinds = {c["name"]: c["kind"] for c in entry["columns"]}
    assert kinds == {"when": "date", "stamp": "datetime", "amount": "number",
                     "paid": "boolean", "code": "identifier"}


def test_small_country_column_still_splits() -> None:
    # ISO 3166-1 alpha-2 codes (pycountry): three countries in four rows is a split
    from harmonize.context import Context
    frame = pd.DataFrame({"Country": ["AU", "IT", "SE", "AU"], "Phone": ["a", "b", "c", "d"]})
    context = Context(TableEvidence.from_frame(frame))
    assert context.country_split is not None and context.country_split.column == "Country"
    # a near-unique column of amounts is no split
    amounts = pd.DataFrame({"Amount": [str(i) for i in range(30)], "x": ["a"] * 30})
    assert Context(TableEvidence.from_frame(amounts)).splits() == []


def test_spaced_postcodes_are_identifiers() -> None:
    # Swedish postcodes are written "NNN NN" (common practice, no source)
    table = TableEvidence.from_frame(pd.DataFrame({"Postcode": ["114 55", "411 03", "211 19"]}))
    from harmonize.context import Context
    assert IdentifierEngine().propose(table.columns[0], Context(table)).kind == "identifier"


@settings(max_examples=200, deadline=None)
@given(st.lists(st.integers(0, 6), max_size=40), st.integers(0, 7))
def test_report_examples_are_the_most_frequent_values(counts: list[int], k: int) -> None:
    # reference: numpy's stable argsort (ties keep their order), the first k positions
    array = np.array(counts, dtype=np.int64)
    expected = np.argsort(-array, kind="stable")[:k]
    assert most_frequent(array, k).tolist() == expected.tolist()


def test_columns_in_threads_give_the_same_files_and_report(tmp_path: Path) -> None:
    # the threaded road must be the single-threaded one, cell for cell and word for word
    from harmonize.decide import THREADED_ROWS
    from harmonize.pipeline import process_file
    rng = np.random.default_rng(5)
    n = THREADED_ROWS + 1000
    days = rng.integers(1, 29, n)
    frame = pd.DataFrame({
        "Booked": [f"{d:02d}/{m:02d}/2024" for d, m in zip(days, rng.integers(1, 13, n))],
        "Total": [f"{v // 100:,}.{v % 100:02d}".replace(",", "\u202f")
                  for v in rng.integers(0, 10**7, n)],
        "Depot": rng.choice(["  North ", "north", "SOUTH", "N/A"], n),
        "Ref": [f"{v:07d}" for v in rng.integers(0, 10**7, n)]})
    src = tmp_path / "ledger.csv"
    frame.to_csv(src, index=False)
    outcomes = []
    for workers in (1, 2):
        out = tmp_path / f"out{workers}"
        outcomes.append((process_file(src, Path("ledger.csv"), out,
                                      Options(), None, None, {src.resolve()},
                                      workers=workers), out))
    (one, out1), (two, out2) = outcomes
    assert one.error is None and two.error is None
    assert one.entries == two.entries and one.unresolved == two.unresolved
    assert (out1 / "ledger.csv").read_bytes() == (out2 / "ledger.csv").read_bytes()


def test_a_hand_edited_date_order_is_refused_with_its_line() -> None:
    # the orders a date convention may name are the engine's own (DMY, MDY, YMD)
    frame = pd.DataFrame({"Booked": ["13/01/2024", "02/03/2024"]}, dtype=object)
    text = dumps(Plan(tables=[decide_table(TableEvidence.from_frame(frame))], options={}))
    assert 'order = "DMY"' in text
    bad = text.replace('order = "DMY"', 'order = "DYM"')
    line = 1 + bad.splitlines().index('order = "DYM"')
    with pytest.raises(PlanError, match=rf"line {line}, field 'order' in the convention: "
                                        r"order 'DYM': expected one of DMY, MDY, YMD or null"):
        loads(bad)
    assert loads(text).tables[0].columns[0].convention["order"] == "DMY"


# ISO 3166-2:US subdivision codes, as pycountry's table holds them (US-ND North Dakota,
# US-NC North Carolina); French "nd"/"nc" (non disponible / non communiqué) are missing
# words elsewhere (common practice, no source)
STATES = ["CA", "NY", "TX", "WA", "OR", "NV", "AZ", "CO", "UT", "ID", "MT", "WY", "ND",
          "NC", "SD", "NE"]


def test_short_words_of_one_language_are_codes_in_a_column_of_codes() -> None:
    import pycountry
    assert all(pycountry.subdivisions.get(code=f"US-{s}") is not None for s in STATES)
    rule = find_missing(ColumnEvidence.from_series("state", 0, pd.Series(STATES + ["NA"])))
    assert rule.tokens == {"na"}     # "NA" is the missing marker every export uses
    # beside amounts, or written in small letters, they mean "not available"
    amounts = pd.Series(["12", "17", "nd", "ND", "NC", "25"])
    assert find_missing(ColumnEvidence.from_series("x", 0, amounts)).tokens == {"nd", "nc"}
    lower = pd.Series([s.lower() for s in STATES])
    assert {"nd", "nc"} <= find_missing(ColumnEvidence.from_series("x", 0, lower)).tokens
    # the user's own missing word is always honoured
    told = find_missing(ColumnEvidence.from_series("state", 0, pd.Series(STATES)),
                        Options(missing_words=("ND",)))
    assert told.tokens == {"nd"}
