"""Currency minor units (ISO 4217) and rounding half away from zero, as the spreadsheet
ROUND function does."""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

_SCALES = [1.0, 10.0, 100.0, 1000.0, 10000.0]

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
    """Whether `code` is an ISO 4217 currency code the tool knows the minor unit of."""
    return code in _EXPONENTS or code in KNOWN_TWO_DECIMALS


def minor_unit(code: str) -> int:
    """Decimal places of ISO 4217 currency `code` (EUR 2, JPY 0, KWD 3); 2 for codes not listed.

    This is the one place the tool looks up minor units; money is rounded to them."""
    return _EXPONENTS.get(code, 2)


def round_money(value: float, places: int) -> float:
    """Round half away from zero to `places` decimals. The float is first read at 15
    significant digits (what a spreadsheet shows and rounds), so 2.675 rounds to 2.68.

    Fast path: when the scaled value is clearly not near a half, the answer does not depend on
    those last digits, and integer / 10**places is the correctly rounded float of the decimal
    result, the same float the decimal path returns. Near a half, the decimal path decides."""
    if value == 0:  # zero rates are common (tolls, fixed charges): what the paths below give
        return 0.0
    scale = _SCALES[places] if 0 <= places < len(_SCALES) else 10.0 ** places
    t = abs(value) * scale
    if t < 1e15:
        whole = math.floor(t)
        frac = t - whole
        # reading at 15 significant digits moves t by at most t x 5e-15: stay clear of that
        if abs(frac - 0.5) > 1e-6 + t * 1e-14:
            n = whole + 1 if frac > 0.5 else whole
            return math.copysign(n / scale, value) if n else 0.0
    d = Decimal(f"{value:.15g}")
    q = Decimal(1).scaleb(-places)
    return float(d.quantize(q, rounding=ROUND_HALF_UP))
