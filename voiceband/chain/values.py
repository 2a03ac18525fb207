"""Engineering values with SI prefixes, as builders write them on parts and schematics.

``"47n"``, ``"47nF"``, ``"68m"`` (milli), ``"2.2k"``, ``"1M"`` (mega), ``"4k7"`` (the
resistor-code form with the prefix as decimal point, IEC 60062 "RKM" code) or a plain number.
An optional unit symbol after the prefix must match the quantity asked for (``F`` for a
capacitance, ``H`` for an inductance, ``ohm``/``Ω``/``R`` for a resistance, ``Hz``, ``s``, ``dB``),
so ``c_farad = "47mH"`` is refused as the wrong unit rather than read as 0.047 F.

SI prefixes: BIPM, *The International System of Units* (9th ed., 2019), Table 7: p 1e-12,
n 1e-9, µ/u 1e-6, m 1e-3, k 1e3, M 1e6, G 1e9. ``m`` is milli and ``M`` mega, always.
"""

from __future__ import annotations

import math
import re
from typing import Union

__all__ = ["SI_PREFIXES", "UNIT_SYMBOLS", "parse_value"]

#: SI prefixes accepted (BIPM SI Brochure, 9th ed., Table 7); "u" stands in for "µ".
SI_PREFIXES: dict[str, float] = {
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "µ": 1e-6,
    "μ": 1e-6,  # GREEK SMALL LETTER MU, which some keyboards give instead of MICRO SIGN
    "m": 1e-3,
    "k": 1e3,
    "K": 1e3,  # common on parts lists; no SI prefix is written "K", so it cannot be misread
    "M": 1e6,
    "G": 1e9,
}

#: Unit symbols accepted after the prefix, per quantity.
UNIT_SYMBOLS: dict[str, tuple[str, ...]] = {
    "farad": ("F",),
    "henry": ("H",),
    "ohm": ("ohm", "ohms", "Ω", "Ω", "R"),
    "hz": ("Hz",),
    "second": ("s",),
    "db": ("dB",),
    "none": (),
}

_PLAIN = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(\S*)\s*$")
# "4k7", "2M2", "1n5": digits, a prefix as decimal point, digits (IEC 60062 RKM code)
_RKM = re.compile(r"^\s*(\d+)([pnuµμmkKMGR])(\d+)\s*(\S*)\s*$")


def _all_symbols() -> dict[str, str]:
    return {s: q for q, symbols in UNIT_SYMBOLS.items() for s in symbols}


def parse_value(value: Union[str, int, float], *, unit: str = "none") -> float:
    """A number from a plain value or an SI-prefixed string.

    Parameters
    ----------
    value : str, int or float
        ``47e-9``, ``"47n"``, ``"47 nF"``, ``"4k7"``, ``"2.2kΩ"``, ``"68m"``.
    unit : str, keyword-only
        Quantity asked for, a key of :data:`UNIT_SYMBOLS` (``"farad"``, ``"henry"``, ``"ohm"``,
        ``"hz"``, ``"second"``, ``"db"``, ``"none"``); a unit symbol in the text must match it.

    Returns
    -------
    float
        The value in the base unit (farads, henries, ohms, hertz, seconds).

    Raises
    ------
    ValueError
        One sentence saying what is wrong (not a number, unknown prefix, wrong unit, not finite).

    Examples
    --------
    >>> parse_value("47n", unit="farad")
    4.7e-08
    >>> parse_value("4k7", unit="ohm")
    4700.0
    >>> parse_value("68m", unit="henry")
    0.068
    """
    if unit not in UNIT_SYMBOLS:
        raise ValueError(f"unknown quantity {unit!r}")
    expected = UNIT_SYMBOLS[unit]
    if isinstance(value, bool):
        raise ValueError(f"{value!r} is not a number")
    if isinstance(value, (int, float)):
        v = float(value)
    elif isinstance(value, str):
        v = _parse_text(value, unit, expected)
    else:
        raise ValueError(f"{value!r} is not a number or a text such as \"47n\"")
    if not math.isfinite(v):
        raise ValueError(f"{value!r} is not a finite number")
    return v


def _parse_text(text: str, unit: str, expected: tuple[str, ...]) -> float:
    m = _RKM.match(text)
    if m:
        whole, prefix, frac, rest = m.groups()
        scale = 1.0 if prefix == "R" else SI_PREFIXES[prefix]
        if prefix == "R" and unit != "ohm":
            raise ValueError(f"{text!r} is a resistor code (R as decimal point) but a value in {_name(unit)} is needed")
        _check_unit(text, rest, unit, expected)
        return _scaled(f"{whole}.{frac}", scale)
    m = _PLAIN.match(text)
    if not m:
        raise ValueError(f"{text!r} is not a number such as 47e-9, \"47n\" or \"4k7\"")
    number, rest = m.groups()
    scale = 1.0
    if rest:
        symbols = _all_symbols()
        if rest in symbols or rest.lower() in ("ohm", "ohms"):
            pass  # a bare unit, no prefix
        elif rest[0] in SI_PREFIXES:
            scale = SI_PREFIXES[rest[0]]
            rest = rest[1:]
        else:
            raise ValueError(
                f"{text!r} has an unknown suffix {rest!r}; use an SI prefix p, n, u (µ), m (milli), k, M (mega) or G"
            )
    _check_unit(text, rest, unit, expected)
    return _scaled(number, scale)


def _scaled(number: str, scale: float) -> float:
    # through the decimal exponent, so "47n" reads as 4.7e-08 exactly as 47e-9 does
    return float(f"{number}e{round(math.log10(scale))}")


def _name(unit: str) -> str:
    return {"farad": "farads", "henry": "henries", "ohm": "ohms", "hz": "hertz", "second": "seconds",
            "db": "decibels", "none": "plain numbers"}[unit]


def _check_unit(text: str, rest: str, unit: str, expected: tuple[str, ...]) -> None:
    if not rest:
        return
    if rest in expected or (unit == "ohm" and rest.lower() in ("ohm", "ohms")):
        return
    symbols = _all_symbols()
    other = symbols.get(rest, "ohm" if rest.lower() in ("ohm", "ohms") else None)
    if other is not None:
        raise ValueError(f"{text!r} is in {_name(other)} but a value in {_name(unit)} is needed")
    raise ValueError(f"{text!r} has an unknown unit {rest!r}; a value in {_name(unit)} is needed")
