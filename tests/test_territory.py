"""Country recognition (harmonize.territory) against CLDR via babel and ISO 3166 via pycountry."""

from __future__ import annotations

import pandas as pd
import pycountry
import pytest
from babel import Locale

from harmonize.context import Context
from harmonize.evidence import TableEvidence
from harmonize.territory import fold, territory_of, territory_share

NOT_COUNTRIES = ("ZZ", "EU", "EZ", "UN", "QO")


def cldr_names(lang: str) -> list[tuple[str, str]]:
    return [(code, name) for code, name in Locale.parse(lang).territories.items()
            if len(code) == 2 and code.isalpha() and code not in NOT_COUNTRIES]


@pytest.mark.parametrize("lang", ["de", "fr", "es", "en", "it", "nl"])
def test_every_cldr_territory_name_maps_back_to_its_code(lang: str) -> None:
    # Unicode CLDR territory display names, via babel (CLDR 49 in babel 2.19.0)
    names = cldr_names(lang)
    assert len(names) > 250
    wrong = [(code, name, territory_of(name)) for code, name in names
             if territory_of(name) != code]
    assert wrong == []


@pytest.mark.parametrize(("lang", "code"), [("pt", "IR"), ("pt", "OM"), ("ja", "JP")])
def test_short_cldr_names_are_found(lang: str, code: str) -> None:
    assert territory_of(dict(cldr_names(lang))[code]) == code


def test_every_iso_3166_code_maps_to_its_alpha2() -> None:
    # ISO 3166-1 alpha-2 and alpha-3, via pycountry
    for country in pycountry.countries:
        assert territory_of(country.alpha_2) == country.alpha_2
        assert territory_of(country.alpha_3) == country.alpha_2
        assert territory_of(country.alpha_3.lower()) == country.alpha_2


@pytest.mark.parametrize(("text", "code"), [
    ("Deutschland", "DE"), ("  deutschland ", "DE"), ("ALLEMAGNE", "DE"), ("Alemania", "DE"),
    ("Côte d’Ivoire", "CI"), ("cote d'ivoire", "CI"), ("Österreich", "AT"), ("Oesterreich", None),
    ("UK", "GB"), ("U.K.", "GB"), ("Great Britain", "GB"), ("USA", "US"), ("Holland", "NL"),
    ("België", "BE"), ("Schweiz", "CH"), ("Suisse", "CH"), ("Россия", "RU"),
    ("Atlantis", None), ("", None), ("XYZ", None), ("Paris", None),
])
def test_names_codes_and_aliases(text: str, code: str | None) -> None:
    # CLDR names (de, fr, es, nl, ru via babel); aliases from locales/territory_aliases.txt;
    # "Oesterreich" (oe for ö) is a transliteration CLDR does not carry
    assert territory_of(text) == code


def test_fold() -> None:
    assert fold("Côte d’Ivoire") == "cotedivoire"
    assert fold("SAINT-BARTHÉLEMY") == fold("Saint Barthélemy")


def test_territory_share_weights_by_count() -> None:
    assert territory_share(["France", "Atlantis"], [3, 1]) == pytest.approx(0.75)
    assert territory_share([], []) == 0.0


def test_country_column_is_offered_as_context() -> None:
    frame = pd.DataFrame({"Land": ["Deutschland", "France", "UK", "España", "Deutschland"],
                          "Town": ["Ostwehl", "Brévaux", "Quenbury", "Valmorèz", "Lindmere"]})
    frame = pd.concat([frame] * 5, ignore_index=True)  # a split needs a few rows per group
    context = Context(TableEvidence.from_frame(frame))
    split = context.country_split
    assert split is not None and split.column == "Land"
    assert dict(zip(split.labels, split.territories, strict=True)) == {
        "Deutschland": "DE", "France": "FR", "UK": "GB", "España": "ES"}


def test_branch_codes_name_their_country_and_tax_numbers_do_not() -> None:
    # ISO 3166-1 alpha-2 prefixes: "DE-04" is a German branch; an EU VAT number starts
    # with its member state's code ("DE 123 456 789", Council Directive 2006/112/EC
    # art. 215, from memory) but names a taxpayer, not the row's country
    from harmonize.context import _label_territory
    assert _label_territory("DE-04") == "DE" and _label_territory("FR_PARIS") == "FR"
    assert _label_territory("DE 123 456 789") is None
    assert _label_territory("FR 40 303 265 045") is None


@pytest.mark.parametrize(("language", "code"), [
    ("ar", "EG"), ("fa", "IR"), ("he", "IL"), ("uk", "UA"), ("th", "TH"), ("id", "ID"),
    ("bg", "BG"),
])
def test_country_names_in_more_scripts(language: str, code: str) -> None:
    # Unicode CLDR territory names, as babel ships them
    assert territory_of(Locale.parse(language).territories[code]) == code
