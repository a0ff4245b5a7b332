"""Currency minor units (ISO 4217) and rounding half away from zero, as the spreadsheet
ROUND function does."""

from __future__ import annotations

from decimal import ROUND_HALF_UP, Decimal

# Minor-unit exponents of ISO 4217 codes that are not 2 (from the ISO 4217 list; from
# memory, checked against the tests' hand examples). Every other code uses 2.
_EXPONENTS = {
    "BIF": 0, "CLP": 0, "DJF": 0, "GNF": 0, "ISK": 0, "JPY": 0, "KMF": 0, "KRW": 0, "PYG": 0,
    "RWF": 0, "UGX": 0, "UYI": 0, "VND": 0, "VUV": 0, "XAF": 0, "XOF": 0, "XPF": 0,
    "BHD": 3, "IQD": 3, "JOD": 3, "KWD": 3, "LYD": 3, "OMR": 3, "TND": 3,
    "CLF": 4, "UYW": 4,
}

# Codes in common freight use that take 2 decimals; any other well-formed code is accepted
# with a warning that it is not in this list.
KNOWN_TWO_DECIMALS = {
    "AED", "ARS", "AUD", "BGN", "BRL", "CAD", "CHF", "CNY", "CZK", "DKK", "EGP", "EUR", "GBP",
    "HKD", "HUF", "IDR", "ILS", "INR", "MAD", "MXN", "MYR", "NGN", "NOK", "NZD", "PHP", "PLN",
    "QAR", "RON", "RSD", "RUB", "SAR", "SEK", "SGD", "THB", "TRY", "TWD", "UAH", "USD", "ZAR",
}


def is_known_currency(code: str) -> bool:
    return code in _EXPONENTS or code in KNOWN_TWO_DECIMALS


def minor_unit(code: str) -> int:
    return _EXPONENTS.get(code, 2)


def round_money(value: float, places: int) -> float:
    """Round half away from zero to `places` decimals. The float is first read at 15
    significant digits (what a spreadsheet shows and rounds), so 2.675 rounds to 2.68."""
    d = Decimal(f"{value:.15g}")
    q = Decimal(1).scaleb(-places)
    return float(d.quantize(q, rounding=ROUND_HALF_UP))
