"""Identifiers: values that look numeric but must stay text.

Customer numbers with leading zeros, fixed-width article codes, postal codes, digit
strings too long for a float: converting any of these to a number destroys them. The
engine claims a column when its values are codes and something shows they are not
quantities: a leading zero, a digit string too long to be an amount, a header that
names a code together with a fixed width, or check digits that hold: GTIN/EAN/UPC numbers
(GS1 mod 10) and IBANs (ISO 13616, ISO 7064 MOD 97-10). Values are passed through as
written.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any, ClassVar

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.context import Context
from harmonize.engines.base import Converted, Decision
from harmonize.engines.missing import arrow_text
from harmonize.evidence import ColumnEvidence

_CODE = r"^(?=.*\d)[A-Za-z0-9](?:[A-Za-z0-9\-_/.#]| (?! ))*$"  # one space between parts
# The same test without look-arounds, so that it runs in Arrow (RE2) rather than value by
# value: on trimmed text a single space must be followed by a code character.
_CODE_CHARS = r"^[A-Za-z0-9](?:[A-Za-z0-9\-_/.#]| [A-Za-z0-9\-_/.#])*$"
_HEADER = re.compile(
    r"(?:^|[\s_\-./(])(?:id|ids|code|codes|no|nr|num|number|nummer|numéro|numero|zip|"
    r"postal|postcode|postleitzahl|plz|cp|cap|sku|ean|gtin|upc|isbn|iban|account|konto|"
    r"ref|reference|referenz|key|serial|batch|lot|ticket|invoice|rechnung|facture|barcode|"
    r"vat|tin|ssn|siret|siren|swift|bic|sort code|routing|bestellnummer|kundennummer|"
    r"uuid|guid|identifier)"
    r"(?:$|[\s_\-./)#:])", re.IGNORECASE)
# "ID" as a word of a camel-case header ("CustomerID", "IDNumber", "userIDs"), not two
# letters inside an upper-case word ("ACIDCONC", "PAID", "VALID")
_CAMEL_ID = re.compile(r"(?:(?<=[a-z])|^)ID(?=$|[^A-Za-z]|[A-Z][a-z]|s\b)")
LONG_DIGITS = 16   # more digits than a float keeps exactly (IEEE 754 double: 15-17)
GTIN_LENGTHS = (8, 12, 13, 14)   # GTIN-8, UPC-A (GTIN-12), EAN-13, GTIN-14
CHECKED_SAMPLE = 5000   # distinct values whose check digits are worked out
CHECKED_SHARE = 0.95    # share of cells whose check digits must hold ...
MIN_GTINS = 4           # ... over this many distinct numbers (a random one passes 1 in 10)
MIN_IBANS = 2           # ... or IBANs (a random one passes 1 in 97)
_IBAN = re.compile(r"^[A-Z]{2}\d{2}[A-Z0-9]{11,30}$")


def header_names_code(header: str) -> bool:
    return bool(_HEADER.search(_CAMEL_ID.sub(" id ", header)))


def is_code(trimmed: pd.Series) -> np.ndarray:
    """``_CODE`` on trimmed Arrow-backed text: code characters, with a digit somewhere."""
    return _code_mask(pa.array(trimmed, type=pa.large_string()))


def _code_mask(trimmed: pa.Array) -> np.ndarray:
    return (_flags(pc.match_substring_regex(trimmed, _CODE_CHARS))
            & _flags(pc.match_substring_regex(trimmed, "[0-9]")))


def _flags(mask: pa.Array) -> np.ndarray:
    """A boolean Arrow array as numpy (null, for a null value, counts as False)."""
    return np.asarray(pc.fill_null(mask, False), dtype=bool)


def _shape(column: ColumnEvidence) -> dict[str, float]:
    """Weighted shares of the column's cells by shape.

    Everything runs in Arrow on the whole column; the regular expressions run only on the
    values that are not plain digit strings (in an identifier column, usually none).
    """
    text = pc.utf8_trim_whitespace(arrow_text(column.values))
    weights = column.counts.astype(float)
    total = max(weights.sum(), 1.0)
    digits = _flags(pc.ascii_is_decimal(text))   # RE2's \d+: ASCII digits only
    lengths = np.asarray(pc.fill_null(pc.utf8_length(text), 0), dtype=np.int64)
    code, lettered = digits.copy(), np.zeros(len(digits), dtype=bool)
    decimal = False
    others = np.flatnonzero(~digits)
    if len(others):
        rest = text.take(pa.array(others))
        code[others] = _code_mask(rest)
        lettered[others] = code[others] & _flags(pc.match_substring_regex(rest, "[A-Za-z]"))
        decimal = bool(_flags(pc.match_substring_regex(rest, r"^\d+[.,]\d+$")).any())
    lead0 = digits & (lengths >= 2) & _flags(pc.starts_with(text, "0"))
    long = digits & (lengths >= LONG_DIGITS)
    modal = np.bincount(lengths[digits], weights=weights[digits]).argmax() if digits.any() else -1
    return {
        "digits": weights[digits].sum() / total,
        "code": weights[code].sum() / total,
        "lead0": weights[lead0].sum() / total,
        "long": weights[long].sum() / total,
        "fixed": weights[digits & (lengths == modal)].sum() / max(weights[digits].sum(), 1.0),
        "width": float(modal),
        "decimal": float(decimal),
        "lettered": weights[lettered].sum() / total,
    }


def gtin_valid(digits: Sequence[str]) -> np.ndarray:
    """GS1 check digit per digit string of one length (GS1 General Specifications, the
    mod 10 rule: from the right, the digits before the check digit weigh 3, 1, 3, ...;
    the check digit brings the sum to a multiple of ten)."""
    if not len(digits):
        return np.zeros(0, dtype=bool)
    width = len(digits[0])
    matrix = np.frombuffer("".join(digits).encode("ascii"), dtype=np.uint8).reshape(
        len(digits), width).astype(np.int64) - ord("0")
    weights = np.where(np.arange(width - 1)[::-1] % 2 == 0, 3, 1)
    check = (10 - (matrix[:, :-1] @ weights) % 10) % 10
    return check == matrix[:, -1]


def iban_valid(text: str) -> bool:
    """ISO 13616: two letters, two check digits, the account; moved to the end and
    letters read as 10-35, the whole is 1 modulo 97 (ISO 7064 MOD 97-10)."""
    compact = text.replace(" ", "").upper()
    if not _IBAN.match(compact):
        return False
    moved = compact[4:] + compact[:4]
    return int("".join(str(int(ch, 36)) for ch in moved)) % 97 == 1


def _check_digits(column: ColumnEvidence) -> str | None:
    """Why the column's values are GTINs or IBANs by their check digits, or None."""
    values = np.asarray([v.strip() for v in column.values[:CHECKED_SAMPLE].tolist()],
                        dtype=object)
    weights = column.counts[:CHECKED_SAMPLE].astype(float)
    total = max(weights.sum(), 1.0)
    lengths = np.fromiter(map(len, values), dtype=np.int64, count=len(values))
    digits = np.fromiter((v.isascii() and v.isdigit() for v in values), dtype=bool,
                         count=len(values))
    passed = np.zeros(len(values), dtype=bool)
    for width in GTIN_LENGTHS:
        rows = np.flatnonzero(digits & (lengths == width))
        passed[rows] = gtin_valid(values[rows].tolist())
    if passed.sum() >= MIN_GTINS and weights[passed].sum() / total >= CHECKED_SHARE:
        return (f"{weights[passed].sum() / total:.0%} of cells are GTIN/EAN/UPC numbers "
                f"whose GS1 check digit holds")
    ibans = np.fromiter((not d and iban_valid(v) for v, d in zip(values, digits, strict=True)),
                        dtype=bool, count=len(values))
    if ibans.sum() >= MIN_IBANS and weights[ibans].sum() / total >= CHECKED_SHARE:
        return (f"{weights[ibans].sum() / total:.0%} of cells are IBANs whose ISO 13616 "
                f"check digits hold")
    return None


class IdentifierEngine:
    name: ClassVar[str] = "identifiers"

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        if column.total == 0:
            return None
        shape = _shape(column)
        named = header_names_code(column.name)
        evidence: list[str] = []
        if shape["lead0"] > 0 and not shape["decimal"]:
            evidence.append(f"{shape['lead0']:.0%} of cells are digit strings with a leading zero")
        if shape["long"] > 0:
            evidence.append(f"{shape['long']:.0%} of cells have {LONG_DIGITS}+ digits, "
                            "more than a number keeps exactly")
        if named and shape["fixed"] >= 0.95 and shape["digits"] >= 0.5:
            evidence.append(f"the header names a code and digit values have a fixed width "
                            f"of {int(shape['width'])}")
        checked = _check_digits(column) if shape["code"] >= CHECKED_SHARE else None
        if checked:
            evidence.append(checked)
        if named and shape["lettered"] >= 0.9:
            evidence.append("the header names a code and values are letter-digit codes")
        elif named and shape["code"] >= 0.9 and shape["digits"] < 0.5:
            evidence.append("the header names a code and values are digit groups "
                            "such as postcodes")
        if not evidence:
            return None
        confidence = 0.98 if len(evidence) > 1 or shape["lead0"] > 0.05 or checked else 0.95
        return Decision(kind="identifier", engine=self.name, fit=float(shape["code"]),
                        confidence=confidence, convention={"trim": True},
                        evidence=tuple(evidence))

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        result = Converted.empty(len(values))   # every value passed through
        trim = bool(convention.get("trim", True))
        result.text = list(map(str.strip, values)) if trim else list(values)
        return result
