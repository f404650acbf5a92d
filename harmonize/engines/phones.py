"""Phones: numbers in any national or international style, written out in E.164.

Convention keys (a person may edit them in a plan file):

``region``                 ISO 3166 alpha-2 region for numbers without an international
                           prefix (``"GB"``), or null. A country column gives each group its
                           own region through the decision's group rule
                           (``{label: {"region": "DE"}}``); otherwise ``default_region``.
``international_prefixes`` digit prefixes read as "+" when the number does not parse in its
                           region (default ``["00", "011"]``: "0044 ..." in a US row).
``extensions``             ``"keep"`` writes an extension in RFC 3966 form
                           (``+441212345678;ext=12``); ``"drop"`` leaves it out.
``bare_calling_codes``     country calling codes (e.g. ``[39, 49]``) that a number written
                           as bare digits may begin with, its "+" lost ("393471234567", a
                           workbook number cell): such a number that does not read in its
                           region (or has none) is read as if "+" came first, when that is
                           a valid number with one of these codes. The engine lists the
                           codes the column writes with "+" and those of workbook number
                           cells of 11 digits or more; default none.

Only numbers that phonenumbers finds *valid* (in an assigned number range, not merely of a
possible length) are converted. Invalid, impossible and region-less numbers, and spreadsheet
float renderings such as ``4.4207946e+11`` (leading zeros and the "+" are gone), are
unresolved, each with its reason. Validity depends on the phonenumbers metadata, whose
version is recorded in the details.
"""

from __future__ import annotations

import re
import unicodedata
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cache, lru_cache
from typing import Any, ClassVar

import numpy as np
import phonenumbers as pn
from phonenumbers import NumberParseException, PhoneNumberFormat, ValidationResult

from harmonize.context import Context, Split
from harmonize.engines.base import Converted, Decision, GroupRule, Outcome
from harmonize.evidence import ColumnEvidence
from harmonize.locales import load_entries

DEFAULT_PREFIXES = ("00", "011")
E164_MAX_DIGITS = 15          # ITU-T E.164: country code + national number, "+" excluded
SAMPLE_PAIRS = 6000           # distinct (value, region) pairs parsed to judge a column
HEADER_ALONE_SHARE = 0.5      # phone-shaped share a phone header needs
BARE_CODE_CELLS = 2           # cells that must read with a lost "+" before the rule is set
LOST_PLUS_DOUBT = 0.1         # confidence given up per share of cells read that way
# Digits that lost their "+": a workbook number cell, or digits in groups. A national
# number's own marks ("(201) 555-0123", "0121 ...") are no such thing.
BARE_DIGITS = re.compile(r"^[1-9][\d ]*\d$")
TYPED_MIN_DIGITS = 11   # a workbook number this long is no national number (US: 10 digits)
VALID_SHARE_NO_HEADER = 0.6   # valid share a column needs when its header says nothing

_INVISIBLE = dict.fromkeys(map(ord, "\u200b\u200c\u200d\u2060\ufeff\u00ad"))
FLOAT_RENDERING = re.compile(r"^[+-]?\d(?:[.,]\d+)?[eE][+-]?\d+$|^\+?\d{6,}[.,]0+$")
PHONE_SHAPE = re.compile(
    r"^(?:tel:)?\s*(?:\+|\(\+?)?\d[\d\s().\-/]{4,}\d\)?"
    r"(?:\s*(?:;ext=|#|x|ext\.?|extn\.?)\s*\d{1,7})?$", re.IGNORECASE)
FORMATTED = re.compile(r"[+\s().\-/]")
# "39.46253619", "-14.5", "0,25": a number with one decimal mark, as a numbers or units
# column is written (harmonize's own output among them), is no evidence of a phone
PLAIN_DECIMAL = re.compile(r"^[-+]?(?:0|[1-9]\d*)[.,]\d+$")
_TEL_LABEL = re.compile(r"^tel\.?\s*:\s*", re.IGNORECASE)
_INTERNATIONAL = re.compile(r"^(?:tel\.?\s*:\s*)?\(?\s*\+", re.IGNORECASE)
# "(work)", "(Büro)": letters only, so never a vanity number's digits
_TRAILING_LABEL = re.compile(r"\s*\([^\d()]*\)$")


@dataclass(frozen=True)
class PhoneReading:
    e164: str | None          # None when the value cannot be converted
    extension: str | None
    reason: str | None        # why not, for unresolved values
    calling_code: int | None = None


@cache
def _words() -> dict[str, tuple[str, ...]]:
    return load_entries("phone_words")


@cache
def _extension_pattern() -> re.Pattern[str]:
    words = sorted(_words().get("extension", ()), key=len, reverse=True)
    alternatives = "|".join(re.escape(w) for w in words)
    return re.compile(rf"\s*[,;(]?\s*\b(?:{alternatives})\b\.?\s*:?\s*(\d{{1,7}})\)?\s*$",
                      re.IGNORECASE)


def _fold(text: str) -> str:
    decomposed = unicodedata.normalize("NFKD", text.casefold())
    return "".join(ch for ch in decomposed if not unicodedata.combining(ch))


def header_names_phone(header: str) -> bool:
    """'Tel.', 'Mobile no', 'Telefonnummer', 'homePhone' name a phone column; 'Hotel' not."""
    spaced = re.sub(r"([a-z])([A-Z])", r"\1 \2", header)
    words = [w for w in re.split(r"[\W_]+", _fold(spaced)) if w]
    exact = set(_words().get("header.word", ()))
    stems = tuple(_fold(s) for s in _words().get("header.stem", ()))
    return any(w in exact or w.startswith(stems) or w.endswith(stems) for w in words)


class _DigitFold(dict[int, str]):
    """``str.translate`` table: a digit of any script (Unicode category Nd: Arabic-Indic
    "٠١٢", Persian "۰۱۲", Devanagari "०१२") -> the ASCII digit of the same value
    (``unicodedata.decimal``), as phonenumbers itself reads them; filled as met."""

    def __missing__(self, code: int) -> str:
        value = unicodedata.decimal(chr(code), None) if code >= 0x80 else None
        self[code] = chr(code) if value is None else str(value)
        return self[code]


_DIGIT_FOLD = _DigitFold()


def fold_digits(text: str) -> str:
    return text if text.isascii() else text.translate(_DIGIT_FOLD)


def clean(text: str) -> str:
    """NFKC (full-width digits), digits of other scripts made ASCII, invisible characters
    removed, odd spaces made plain, a spreadsheet's leading text marker (') and a trailing
    label such as "(work)" dropped."""
    text = fold_digits(unicodedata.normalize("NFKC", text)).translate(_INVISIBLE)
    text = " ".join(text.split()).lstrip("'")
    return _TRAILING_LABEL.sub("", text)


def is_phone_shaped(text: str) -> bool:
    return bool(PHONE_SHAPE.match(_extension_pattern().sub(r" ext \1", clean(text))))


@lru_cache(maxsize=1 << 18)
def read_phone(raw: str, region: str | None,
               prefixes: tuple[str, ...] = DEFAULT_PREFIXES,
               bare_codes: frozenset[int] = frozenset()) -> PhoneReading:
    """Parse one value in one region (cached: values repeat across groups and calls);
    ``bare_codes``: calling codes a number of bare digits may begin with, its "+" lost."""
    text = clean(raw)
    if FLOAT_RENDERING.match(text):
        return PhoneReading(None, None, "spreadsheet number rendering: leading zeros and '+' "
                                        "are lost; export the column as text")
    if not any(ch.isdigit() for ch in text):
        return PhoneReading(None, None, "no digits")
    text = _extension_pattern().sub(r" ext. \1", text)
    international = bool(_INTERNATIONAL.match(text))
    digits_start = re.sub(r"[\s().\-/]", "", _TEL_LABEL.sub("", text))
    prefixed = next((p for p in prefixes if digits_start.startswith(p)), None)
    if international:
        return _parse(text, None)
    if region:
        reading = _parse(text, region)
        if reading.e164 is None and prefixed:
            alternative = _parse("+" + digits_start[len(prefixed):], None)
            if alternative.e164 is not None:
                return alternative
        if reading.e164 is None and bare_codes and not prefixed:
            return _lost_plus(text, bare_codes) or reading
        return reading
    if prefixed:
        return _parse("+" + digits_start[len(prefixed):], None)
    if bare_codes and (alternative := _lost_plus(text, bare_codes)):
        return alternative
    return PhoneReading(None, None, "no region: the number has no international prefix and "
                                    "the row names no country; give a default region")


def _lost_plus(text: str, codes: frozenset[int]) -> PhoneReading | None:
    """The reading of bare digits with "+" put first, when it is valid and begins with one
    of ``codes``."""
    if not BARE_DIGITS.match(text):
        return None
    reading = _parse("+" + text.replace(" ", ""), None)
    return reading if reading.e164 is not None and reading.calling_code in codes else None


def _parse(text: str, region: str | None) -> PhoneReading:
    if region is not None and region not in pn.SUPPORTED_REGIONS:
        return PhoneReading(None, None, f"region {region!r} is unknown to phonenumbers")
    try:
        number = pn.parse(text, region)
    except NumberParseException as error:
        return PhoneReading(None, None, _PARSE_ERRORS.get(error.error_type, str(error)))
    where = f"region {region}" if region else f"country code +{number.country_code}"
    if not pn.is_valid_number(number):
        why = pn.is_possible_number_with_reason(number)
        return PhoneReading(None, None, _INVALID_REASONS.get(why, "not a valid number")
                            .format(where=where), number.country_code)
    e164 = pn.format_number(number, PhoneNumberFormat.E164)
    if len(e164) - 1 > E164_MAX_DIGITS:
        return PhoneReading(None, None, f"{len(e164) - 1} digits: longer than the "
                                        f"{E164_MAX_DIGITS} E.164 allows", number.country_code)
    return PhoneReading(e164, number.extension or None, None, number.country_code)


_PARSE_ERRORS = {
    NumberParseException.INVALID_COUNTRY_CODE: "no such country calling code",
    NumberParseException.NOT_A_NUMBER: "not a phone number",
    NumberParseException.TOO_SHORT_AFTER_IDD: "too short after the international prefix",
    NumberParseException.TOO_SHORT_NSN: "too short to be a phone number",
    NumberParseException.TOO_LONG: "too long to be a phone number",
}
_INVALID_REASONS = {
    ValidationResult.IS_POSSIBLE: "not a valid number for {where}: right length, but in no "
                                  "assigned number range",
    ValidationResult.IS_POSSIBLE_LOCAL_ONLY: "local number only: the area code is missing "
                                             "({where})",
    ValidationResult.INVALID_COUNTRY_CODE: "no such country calling code",
    ValidationResult.TOO_SHORT: "too short for {where}",
    ValidationResult.TOO_LONG: "too long for {where}",
    ValidationResult.INVALID_LENGTH: "impossible length for {where}",
}


def render(reading: PhoneReading, extensions: str) -> str:
    assert reading.e164 is not None
    if reading.extension and extensions == "keep":
        return f"{reading.e164};ext={reading.extension}"  # RFC 3966 §5.1.5 extension
    return reading.e164


@dataclass
class _Survey:
    """How one column reads under its region assignment (possibly on a sample)."""

    total: float = 0.0
    valid: float = 0.0
    shaped: float = 0.0          # phone-shaped but not valid: listed as unresolved
    floats: float = 0.0
    regionless: float = 0.0
    invalid_national: float = 0.0  # numbers without a prefix, invalid in their region
    bare_digits_valid: float = 0.0   # digits only or a plain decimal, yet valid
    extensions: float = 0.0
    codes: Counter[int] | None = None


class PhoneEngine:
    name: ClassVar[str] = "phones"

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        if not column.total or not _any_digits(column.values):
            return None
        default = (context.options.default_region or "").upper() or None
        from_name = None if default else context.file_territory
        options = context.options.for_engine(self.name)
        prefixes = tuple(options.get("international_prefixes", DEFAULT_PREFIXES))
        split = context.country_split
        if split is not None and split.column == column.name:
            split = None
        named = {t for t in split.territories if t} if split is not None else set()
        region_note = (f"numbers without a prefix are read in the default region {default}"
                       if default else None)
        if from_name:
            default = from_name
            region_note = (f"numbers without a prefix are read in {default}, the country "
                           f"the file name {context.file!r} points to")
        if split is not None and len(named) == 1:
            # one country named throughout (one branch's export): it is the base region
            default = named.pop()
            region_note = f"every row's country column {split.column!r} names {default}"
            split = None
        values, regions, weights = _pairs(column, split, default)
        header = header_names_phone(column.name)
        if not header and _shaped_share(values, weights) < VALID_SHARE_NO_HEADER:
            return None  # cheap test first: most cells of a phone column look like phones
        survey = _survey(values, regions, weights, prefixes)
        bare_codes = lost_plus_codes(column, survey)
        lost_plus = 0.0
        if bare_codes and (survey.regionless or survey.invalid_national):
            before = survey.valid
            with_codes = _survey(values, regions, weights, prefixes, bare_codes)
            lost_plus = with_codes.valid - before
            if lost_plus >= BARE_CODE_CELLS:
                survey = with_codes
        if lost_plus < BARE_CODE_CELLS:
            bare_codes, lost_plus = frozenset(), 0.0
        share_valid = survey.valid / survey.total
        read = survey.valid + survey.shaped + survey.floats
        if header:
            if read / survey.total < HEADER_ALONE_SHARE:
                return None
            fit = read / survey.total
        else:
            formatted_valid = survey.valid - survey.bare_digits_valid
            # bare digit strings and plain decimals without a phone header are left to the
            # identifiers, numbers and units engines
            if share_valid < VALID_SHARE_NO_HEADER or formatted_valid < 0.5 * survey.valid:
                return None
            fit = (read - survey.bare_digits_valid) / survey.total
        convention = {"region": default, "international_prefixes": list(prefixes),
                      "extensions": str(options.get("extensions", "keep")),
                      "bare_calling_codes": sorted(bare_codes)}
        groups = _group_rule(split, default) if split is not None else None
        confidence = self._confidence(header, share_valid, read / survey.total, survey)
        suggestion = _suggested_region(survey, default)
        evidence = self._evidence(column, header, survey, split, suggestion, region_note)
        if lost_plus:
            share = lost_plus / survey.total
            # the "+" is inferred, not written: a little less sure
            confidence = round(max(0.05, confidence - LOST_PLUS_DOUBT * share), 3)
            listed = ", ".join(f"+{c}" for c in sorted(bare_codes))
            evidence.append(f"{share:.1%} of cells are bare digits that read in no region, "
                            f"yet each is a valid number once '+' is put first, with a "
                            f"calling code the column writes elsewhere or a workbook number "
                            f"cell shows ({listed}): read as international numbers")
        return Decision(kind="phone", engine=self.name, fit=min(1.0, round(fit, 6)),
                        confidence=confidence, convention=convention, groups=groups,
                        evidence=tuple(evidence),
                        details=self._details(survey, split, groups, default, suggestion))

    @staticmethod
    def _confidence(header: bool, share_valid: float, share_read: float,
                    survey: _Survey) -> float:
        valid_of_read = survey.valid / max(survey.valid + survey.shaped + survey.floats, 1e-9)
        # invalid numbers are listed, not misread: they lower the odds that the regions
        # are right only a little (measured on tests/corpora: columns with a fifth of
        # their numbers invalid were still decided right)
        conf = 0.99 - 0.25 * (1.0 - valid_of_read) if header else 0.6 + 0.35 * share_valid
        # region-less numbers are listed too; the convention may still lack a region
        conf -= 0.15 * survey.regionless / survey.total
        conf -= 0.5 * (1.0 - share_read)
        return round(min(0.995, max(0.05, conf)), 3)

    @staticmethod
    def _evidence(column: ColumnEvidence, header: bool, survey: _Survey,
                  split: Split | None, suggestion: str | None,
                  region_note: str | None) -> list[str]:
        pct = 100.0 / survey.total
        lines = []
        if header:
            lines.append(f"the header {column.name!r} names a phone column")
        lines.append(f"{survey.valid * pct:.1f}% of cells are valid numbers "
                     f"(phonenumbers {pn.__version__})")
        if split is not None:
            lines.append(f"each row's region comes from the country column {split.column!r}")
        elif region_note:
            lines.append(region_note)
        if survey.shaped:
            lines.append(f"{survey.shaped * pct:.1f}% of cells look like phone numbers but "
                         "are not valid; they are listed")
        if survey.regionless:
            lines.append(f"{survey.regionless * pct:.1f}% of cells have no international "
                         "prefix and no region; give a default region")
        if suggestion:
            lines.append(f"most numbers with a country code are from {suggestion}; if the "
                         f"national numbers are too, give the region {suggestion}")
        if survey.floats:
            lines.append(f"{survey.floats * pct:.1f}% of cells are spreadsheet number "
                         "renderings (e.g. 4.42e+11) and cannot be read")
        return lines

    @staticmethod
    def _details(survey: _Survey, split: Split | None, groups: GroupRule | None,
                 default: str | None, suggestion: str | None) -> dict[str, Any]:
        details: dict[str, Any] = {
            "phonenumbers_version": pn.__version__,
            "output": "E.164; extensions in RFC 3966 form (+441212345678;ext=12)",
            "region_source": ("country column" if split is not None
                              else "default region" if default else "international prefixes only"),
        }
        if groups is not None:
            details["region_column"] = groups.by
        if survey.codes:
            details["stated_calling_codes"] = {f"+{k}": round(v)
                                               for k, v in survey.codes.most_common(10)}
        if survey.extensions:
            details["extensions_seen"] = round(survey.extensions)
        if suggestion:
            details["suggested_default_region"] = suggestion
        return details

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        region = convention.get("region")
        region = str(region).upper() if region else None
        prefixes = tuple(str(p) for p in convention.get("international_prefixes",
                                                         DEFAULT_PREFIXES))
        extensions = str(convention.get("extensions", "keep"))
        bare_codes = frozenset(int(c) for c in convention.get("bare_calling_codes") or ())
        result = Converted.empty(len(values))
        for i, raw in enumerate(values):
            reading = read_phone(raw, region, prefixes, bare_codes)
            if reading.e164 is None:
                _unresolved(result, i, raw, reading)
            else:
                result.set(i, render(reading, extensions), Outcome.CONVERTED)
        return result


def _unresolved(result: Converted, i: int, raw: str, reading: PhoneReading) -> None:
    """List a value; bare digits that are a valid number once "+" is put first offer that
    reading (a calling code the column does not vouch for: never applied unasked)."""
    why = reading.reason or "not a valid number"
    text = clean(raw)
    if BARE_DIGITS.match(text):
        plus = _parse("+" + text.replace(" ", ""), None)
        if plus.e164 is not None:
            result.unresolved(i, f"{why}; with '+' first it would be {plus.e164}, if the "
                                 f"'+' was lost (add {plus.calling_code} to "
                                 f"bare_calling_codes in the plan to read it so)",
                              candidates=[plus.e164])
            return
    result.unresolved(i, why)


def _any_digits(values: np.ndarray) -> bool:
    return any(any(ch.isdigit() for ch in v) for v in values[:2000].tolist())


def _suggested_region(survey: _Survey, default: str | None) -> str | None:
    """The region most prefixed numbers name, when many national ones fail to read."""
    failing = survey.regionless + survey.invalid_national
    if not survey.codes or failing < 0.1 * survey.total:
        return None
    code, weight = survey.codes.most_common(1)[0]
    region = pn.region_code_for_country_code(code)
    dominant = weight >= 0.6 * sum(survey.codes.values())
    if dominant and region not in (None, "ZZ", "001", default):
        return region
    return None


def _bare(value: str) -> bool:
    """Digits only, or a plain decimal number: what a column of phones without a phone
    header must not be made of (identifiers, amounts and quantities are)."""
    text = fold_digits(value.strip())
    return not FORMATTED.search(text) or bool(PLAIN_DECIMAL.match(text))


def _shaped_share(values: list[str], weights: np.ndarray) -> float:
    shaped = np.fromiter((is_phone_shaped(v) and not PLAIN_DECIMAL.match(fold_digits(v.strip()))
                          for v in values), dtype=bool, count=len(values))
    return float(weights[shaped].sum() / weights.sum())


def _group_rule(split: Split, default: str | None) -> GroupRule:
    conventions = {label: {"region": territory}
                   for label, territory in zip(split.labels, split.territories, strict=True)
                   if territory is not None and territory != default}
    return GroupRule(by=split.column, conventions=conventions)


def _pairs(column: ColumnEvidence, split: Split | None,
           default: str | None) -> tuple[list[str], list[str | None], np.ndarray]:
    """Distinct (value, region) pairs with their cell counts, sampled when there are many."""
    values = column.values
    if split is None or column.codes is None:
        regions: list[str | None] = [default] * len(values)
        picked_values, weights = values.tolist(), column.counts.astype(float)
    else:
        label_region = [t or default for t in split.territories] + [default]
        present = column.codes >= 0
        n_labels = split.n_groups + 1
        group = np.where(split.codes >= 0, split.codes, split.n_groups)[present]
        keys, weights_int = np.unique(column.codes[present] * n_labels + group,
                                      return_counts=True)
        picked_values = values[keys // n_labels].tolist()
        regions = [label_region[g] for g in (keys % n_labels).tolist()]
        weights = weights_int.astype(float)
    if len(picked_values) > SAMPLE_PAIRS:
        rng = np.random.default_rng(0)  # fixed seed: the same column gives the same decision
        keep = np.sort(rng.choice(len(picked_values), SAMPLE_PAIRS, replace=False))
        scale = weights.sum() / weights[keep].sum()
        picked_values = [picked_values[k] for k in keep]
        regions = [regions[k] for k in keep]
        weights = weights[keep] * scale
    return picked_values, regions, weights


def _survey(values: list[str], regions: list[str | None], weights: np.ndarray,
            prefixes: tuple[str, ...], bare_codes: frozenset[int] = frozenset()) -> _Survey:
    survey = _Survey(total=float(weights.sum()), codes=Counter())
    for value, region, weight in zip(values, regions, weights.tolist(), strict=True):
        reading = read_phone(value, region, prefixes, bare_codes)
        written = value.lstrip(" (").lower().startswith(("+", "tel:+", *prefixes))
        if reading.e164 is not None and written and survey.codes is not None:
            survey.codes[reading.calling_code or 0] += weight  # codes the numbers state
        if reading.e164 is not None:
            survey.valid += weight
            survey.extensions += weight if reading.extension else 0.0
            if _bare(value):
                survey.bare_digits_valid += weight
        elif FLOAT_RENDERING.match(clean(value)):
            survey.floats += weight
        elif is_phone_shaped(value):
            survey.shaped += weight
            if reading.reason and reading.reason.startswith("no region"):
                survey.regionless += weight
            elif not value.lstrip().startswith(("+", "00")):
                survey.invalid_national += weight
    return survey


def lost_plus_codes(column: ColumnEvidence, survey: _Survey) -> frozenset[int]:
    """Calling codes a bare number of this column may begin with: those its numbers write
    with "+" or a prefix, and those of workbook number cells too long to be national."""
    codes = {code for code, weight in (survey.codes or {}).items() if code and weight}
    for value, tag in column.typed.items():
        digits = clean(value)
        if tag == "number" and digits.isdigit() and len(digits) >= TYPED_MIN_DIGITS:
            reading = _parse("+" + digits, None)
            if reading.e164 is not None and reading.calling_code:
                codes.add(reading.calling_code)
    return frozenset(codes)

