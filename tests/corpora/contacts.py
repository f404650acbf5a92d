"""A generator of invented customer lists with known truth, for the text, phone and boolean
engines.

Scenario (invented): "Fernwick Cycle Works", a maker of cargo bicycles, merges the customer
lists of its branches in eight countries. Each branch writes the country in its own
language (or as an ISO code), the towns (all invented) with the usual slips of case, accents
and spacing, phones in its national style (sometimes international, with an extension, cut
short, or mangled by a spreadsheet into 4.4121234e+11), a newsletter flag in its language,
an active flag as 1/0, and free-text notes.

Truth per cell: the output a careful person would write, or ``None`` where no output is
right and the cell must be listed (an invalid phone, "maybe" in a yes/no column, a national
number in a row whose country is blank), or ``UNDETECTABLE`` for a foreign customer's
number written nationally that happens to be valid in the row's country as well. Phone
truth comes from phonenumbers itself (the generator starts from valid numbers it formats in
each style); the other truths hold by construction.
"""

from __future__ import annotations

import unicodedata
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import phonenumbers as pn

FIRM = "Fernwick Cycle Works"
# Truth of a cell no reader can get right: a foreign number written nationally that is also
# a valid number of the row's own country. It should be listed, but nothing shows it.
UNDETECTABLE = "<also valid in the row's region>"


@dataclass(frozen=True)
class Branch:
    region: str
    country_forms: tuple[str, ...]      # how this branch writes its country, commonest first
    towns: tuple[str, ...]
    yes: str
    no: str
    unsure: str                          # an answer that is neither yes nor no
    extension_word: str


BRANCHES = (
    Branch("GB", ("United Kingdom", "UK", "GB", "GBR"),
           ("Harrowdene", "Quenbury", "Lindmere", "Ashcombe Vale", "Threlford"),
           "Yes", "No", "maybe", "ext."),
    Branch("DE", ("Deutschland", "DE", "Germany", "DEU"),
           ("Kalbenfürth", "Süderhagen", "Mörlingen an der Wiese", "Tannweiler-Ost"),
           "ja", "nein", "vielleicht", "Durchwahl"),
    Branch("FR", ("France", "FR", "FRA"),
           ("Brévaux-les-Ormes", "Valmorèz", "Saint-Évrard-sur-Lône", "Clairvèze"),
           "oui", "non", "peut-être", "poste"),
    Branch("ES", ("España", "ES", "Spain"),
           ("Villaturón", "San Críspulo de la Vega", "Almendrejo"),
           "sí", "no", "quizás", "ext."),
    Branch("NL", ("Nederland", "NL", "NLD"),
           ("Oosterwaal", "Groenhoek aan Zee", "Veldermeer"),
           "ja", "nee", "misschien", "toestel"),
    Branch("IT", ("Italia", "IT", "ITA"),
           ("Montecàlvio", "Borgo Sant'Ilaria", "Valdorezza"),
           "sì", "no", "forse", "interno"),
    Branch("PL", ("Polska", "PL", "POL"),
           ("Wrzosolin", "Łąkomierz Dolny", "Brzozówek"),
           "tak", "nie", "może", "wewn."),
    Branch("US", ("United States", "US", "USA"),
           ("Marrowfield", "Quillan Springs", "Cedarholt"),
           "Y", "N", "unsure", "x"),
)

NOTE_PARTS = (
    ("Prefers delivery", "Asked for a call", "Wants the invoice", "Collects in person",
     "Ordered a spare battery", "Requested the long frame"),
    ("before noon", "after the school run", "on the first weekday of the month",
     "only when the yard gate is open", "with the cargo box fitted"),
    ("gate code", "order ref", "frame no.", "ticket"),
)


@dataclass
class Corpus:
    frame: pd.DataFrame
    truth: dict[str, list[str | None]]          # column -> per-row expected output
    missing: dict[str, np.ndarray] = field(default_factory=dict)  # column -> rows left blank
    kinds: dict[str, str] = field(default_factory=dict)


def _vary_text(rng: np.random.Generator, text: str) -> str:
    """A slip of the kind people make: case, accents, spacing, invisible characters."""
    choice = rng.integers(7)
    if choice == 0:
        return text.upper()
    if choice == 1:
        return text.lower()
    if choice == 2:
        return "".join(c for c in unicodedata.normalize("NFD", text)
                       if not unicodedata.combining(c))
    if choice == 3:
        return f"  {text} "
    if choice == 4:
        return text.replace(" ", "\u00a0") if " " in text else text + "\u200b"
    if choice == 5:
        return text.replace(" ", "  ").replace("-", " - ") if (" " in text or "-" in text) \
            else text.upper()
    return unicodedata.normalize("NFD", text)  # decomposed accents, as some systems export


def _valid_number(rng: np.random.Generator, region: str) -> pn.PhoneNumber:
    kind = pn.PhoneNumberType.MOBILE if rng.random() < 0.4 else pn.PhoneNumberType.FIXED_LINE
    example = pn.example_number_for_type(region, kind) or pn.example_number(region)
    national = str(example.national_number)
    for _ in range(50):
        tail = "".join(str(d) for d in rng.integers(0, 10, 4))
        number = pn.PhoneNumber(country_code=example.country_code,
                                national_number=int(national[:-4] + tail))
        if pn.is_valid_number(number):
            return number
    return example


def _phone_cell(rng: np.random.Generator, branch: Branch) -> tuple[str, str | None]:
    """(cell text, truth); truth None for cells that must be listed."""
    number = _valid_number(rng, branch.region)
    e164 = pn.format_number(number, pn.PhoneNumberFormat.E164)
    national = pn.format_number(number, pn.PhoneNumberFormat.NATIONAL)
    international = pn.format_number(number, pn.PhoneNumberFormat.INTERNATIONAL)
    roll = rng.random()
    if roll < 0.004:  # a foreign customer's number written nationally: its region is unknown
        region = BRANCHES[int(rng.integers(len(BRANCHES)))].region
        if region != branch.region:
            cell = pn.format_number(_valid_number(rng, region), pn.PhoneNumberFormat.NATIONAL)
            try:
                local = pn.is_valid_number(pn.parse(cell, branch.region))
            except pn.NumberParseException:
                local = False
            return cell, UNDETECTABLE if local else None
    if roll < 0.007:  # two numbers in one cell: which one is meant?
        other = pn.format_number(_valid_number(rng, branch.region), pn.PhoneNumberFormat.NATIONAL)
        return f"{national} / {other}", None
    if roll < 0.015:  # cut short while typing: listed unless still a valid number
        cut = national[:-3]
        try:
            still_valid = pn.is_valid_number(pn.parse(cut, branch.region))
        except pn.NumberParseException:
            still_valid = False
        return (cut, None) if not still_valid else _phone_cell(rng, branch)
    if roll < 0.02:  # a spreadsheet turned the number into a float
        return f"{float(e164[1:]):.7e}", None
    if roll < 0.05:
        ext = str(rng.integers(2, 999))
        return f"{national} {branch.extension_word} {ext}", f"{e164};ext={ext}"
    if roll < 0.17:
        return international, e164
    if roll < 0.21:
        return "00" + international[1:], e164
    if roll < 0.24 and national.startswith("0"):
        code = international.split(" ")[0]
        return f"{code} (0){national[1:]}", e164
    return national, e164


def _note(rng: np.random.Generator, row: int) -> str:
    start, when, ref = (part[rng.integers(len(part))] for part in NOTE_PARTS)
    return f"{start} {when}; {ref} {1000 + row * 7 + int(rng.integers(7))}."


def generate(seed: int, rows: int = 3000, *, country_column: bool = True,
             branches: tuple[Branch, ...] = BRANCHES) -> Corpus:
    """A customer list with known truth; ``country_column=False`` gives one branch's
    export with no country column (phones then need a default region)."""
    rng = np.random.default_rng(seed)
    chosen = [branches[i] for i in rng.integers(len(branches), size=rows)]
    data: dict[str, list[str]] = {k: [] for k in ("Country", "Town", "Phone", "Newsletter",
                                                  "Active", "Notes")}
    truth: dict[str, list[str | None]] = {k: [] for k in data}
    for row, branch in enumerate(chosen):
        _country(rng, branch, data, truth)
        town = branch.towns[rng.integers(len(branch.towns))]
        cell = town if rng.random() < 0.8 else _vary_text(rng, town)
        if rng.random() < 0.003:  # a typo: nothing can tell, so it stays as written
            letters = [i for i, ch in enumerate(town) if ch.isalpha() and i > 0]
            cut = letters[int(rng.integers(len(letters)))]
            town = cell = town[:cut] + town[cut + 1:]
        data["Town"].append(cell)
        truth["Town"].append(town)
        phone, expected = ("", "") if rng.random() < 0.03 else _phone_cell(rng, branch)
        if country_column and not data["Country"][-1] and not phone.startswith(("+", "00")):
            expected = None  # no country and no prefix: no region, the number must be listed
        data["Phone"].append(phone)
        truth["Phone"].append(expected)
        _flags(rng, branch, data, truth)
        note = _note(rng, row) if rng.random() < 0.6 else ""
        data["Notes"].append(f" {note}" if note and rng.random() < 0.1 else note)
        truth["Notes"].append(note)
    if not country_column:
        del data["Country"], truth["Country"]
    frame = pd.DataFrame(data, dtype=object)
    missing = {k: np.array([v.strip() == "" for v in data[k]]) for k in data}
    kinds = {"Country": "text", "Town": "text", "Phone": "phone", "Newsletter": "boolean",
             "Active": "boolean", "Notes": "text"}
    return Corpus(frame, truth, missing, {k: v for k, v in kinds.items() if k in data})


def _country(rng: np.random.Generator, branch: Branch, data: dict[str, list[str]],
             truth: dict[str, list[str | None]]) -> None:
    forms = branch.country_forms
    weights = np.array([0.7] + [0.3 / (len(forms) - 1)] * (len(forms) - 1))
    form = forms[rng.choice(len(forms), p=weights)]
    cell = form.upper() if form == forms[0] and rng.random() < 0.05 else form
    if rng.random() < 0.01:  # left blank: the row's phone then has no region
        cell = form = ""
    data["Country"].append(cell)
    truth["Country"].append(form)


def _flags(rng: np.random.Generator, branch: Branch, data: dict[str, list[str]],
           truth: dict[str, list[str | None]]) -> None:
    roll = rng.random()
    if roll < 0.05:
        data["Newsletter"].append("")
        truth["Newsletter"].append("")
    elif roll < 0.057:
        data["Newsletter"].append(branch.unsure)
        truth["Newsletter"].append(None)
    else:
        yes = rng.random() < 0.45
        word = branch.yes if yes else branch.no
        data["Newsletter"].append(word.upper() if rng.random() < 0.1 else word)
        truth["Newsletter"].append("true" if yes else "false")
    active = rng.random() < 0.8
    data["Active"].append("1" if active else "0")
    truth["Active"].append("true" if active else "false")


@dataclass
class Score:
    cells: int = 0                 # non-missing cells with truth
    decidable: int = 0
    correct: int = 0
    decidable_listed: int = 0
    wrong_unlisted: int = 0
    undecidable: int = 0
    undecidable_listed: int = 0
    undetectable: int = 0         # cells marked UNDETECTABLE (counted wrong unless listed)

    def add(self, other: Score) -> None:
        for name in self.__dataclass_fields__:
            setattr(self, name, getattr(self, name) + getattr(other, name))

    @property
    def rates(self) -> dict[str, float]:
        return {
            "wrong_unlisted": self.wrong_unlisted / max(self.cells, 1),
            "decidable_correct": self.correct / max(self.decidable, 1),
            "decidable_listed": self.decidable_listed / max(self.decidable, 1),
            "undecidable_listed": self.undecidable_listed / max(self.undecidable, 1),
        }


def score(truth: list[str | None], missing: np.ndarray, text: np.ndarray,
          outcome: np.ndarray, unresolved_code: int) -> Score:
    """Compare one column's output with its truth (missing rows are not counted)."""
    result = Score()
    for expected, blank, got, how in zip(truth, missing, text, outcome, strict=True):
        if blank:
            continue
        result.cells += 1
        listed = how == unresolved_code
        if expected == UNDETECTABLE:
            result.undetectable += 1
            result.wrong_unlisted += not listed
            continue
        if expected is None:
            result.undecidable += 1
            result.undecidable_listed += listed
            result.wrong_unlisted += not listed
            continue
        result.decidable += 1
        result.decidable_listed += listed
        result.correct += (not listed) and got == expected
        result.wrong_unlisted += (not listed) and got != expected
    return result


def measure(corpora: list[tuple[int, bool]], rows: int = 3000) -> dict[str, Score]:
    """Decide and apply each corpus with the registered engines; rates per kind.

    ``corpora`` lists (seed, with a country column); without one, the corpus is one
    branch's export and the branch's region is given as the default region.
    """
    from harmonize.apply import apply_table
    from harmonize.decide import decide_table
    from harmonize.engines.base import Outcome
    from harmonize.evidence import TableEvidence
    from harmonize.options import Options

    totals: dict[str, Score] = {}
    for seed, country_column in corpora:
        if country_column:
            corpus, options = generate(seed, rows), Options()
        else:
            branch = BRANCHES[seed % len(BRANCHES)]
            corpus = generate(seed, rows, country_column=False, branches=(branch,))
            options = Options(default_region=branch.region)
        table = TableEvidence.from_frame(corpus.frame)
        result = apply_table(table, decide_table(table, options), options)
        for column in result.columns:
            name = column.plan.name
            if column.plan.kind != corpus.kinds[name]:
                raise AssertionError(f"seed {seed}: {name} read as {column.plan.kind}")
            totals.setdefault(corpus.kinds[name], Score()).add(
                score(corpus.truth[name], corpus.missing[name], column.text, column.outcome,
                      Outcome.UNRESOLVED))
    return totals


if __name__ == "__main__":  # python -m tests.corpora.contacts [first_seed] [count]
    import sys

    from harmonize import engines
    from harmonize.engines.booleans import BooleanEngine
    from harmonize.engines.phones import PhoneEngine

    others = [e for e in engines.ENGINES if e.name not in ("booleans", "phones")]
    engines.ENGINES[:] = [BooleanEngine(), *[e for e in others if e.name == "dates"],
                          PhoneEngine(), *[e for e in others if e.name != "dates"]]
    first, count = (int(a) for a in (sys.argv[1:] + ["100", "10"])[:2])
    seeds = range(first, first + count)
    results = measure([(s, with_country) for s in seeds for with_country in (True, False)])
    for kind, total in results.items():
        rates = ", ".join(f"{k} {v:.4%}" for k, v in total.rates.items())
        print(f"{kind:8} cells {total.cells:7}  undecidable {total.undecidable:5}  "
              f"undetectable {total.undetectable:3}  {rates}")
