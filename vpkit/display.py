"""The one display formatter: SI numbers to text in a chosen unit, rounded by one rule.

Rule (stated once, used by the panels, the command line and the reports): a
standard uncertainty is shown with two significant digits and its value is
rounded to the same decimal place [1] (:func:`value_u`); an uncertainty, or a
share of an uncertainty budget, shown alone has two significant digits too
(:func:`uncertainty`); any other number is shown with four significant digits
(:func:`number`); a signed difference has fixed decimals, one for % and for
units of u (z and ζ scores), two for K and kJ/mol, four for a residual in ln p
(:func:`signed`). Tables written to CSV keep full precision; only text is rounded.

References
----------
.. [1] JCGM 100:2008 (GUM), section 7.2.6: an uncertainty should be given with
   at most two significant digits, and the estimate rounded to match.
"""

from __future__ import annotations

import math

from .units import from_si

#: How units are shown.
LABELS = {"degC": "°C", "degF": "°F", "K": "K"}


def _decimals(u: float) -> int:
    """Decimal place (may be negative) that leaves two significant digits of u."""
    if not (math.isfinite(u) and u > 0):
        return 2
    return 1 - int(math.floor(math.log10(abs(u))))


def value_u(value: float, u: float | None, unit: str = "") -> str:
    """'v ± u unit' by the rule of this module; '—' for a missing value."""
    if value is None or not math.isfinite(value):
        return "—"
    value = float(value)  # Python rounding: exact, no overflow for huge numbers
    if u is None or not math.isfinite(u):
        return number(value, unit)
    u = float(u)
    d = _decimals(u)
    shown = max(d, 0)
    text = f"{_clean(round(value, d)):.{shown}f} ± {round(u, d):.{shown}f}"
    return f"{text} {LABELS.get(unit, unit)}".rstrip()


def number(value: float, unit: str = "", digits: int = 4) -> str:
    """A number alone, to ``digits`` significant digits, trailing zeros kept ('81.00',
    '0.9700'; '—' when missing); beyond 10^digits, the whole number."""
    if value is None or not math.isfinite(value):
        return "—"
    v = _clean(_round_sig(float(value), digits))
    decimals = 0 if v == 0 else digits - 1 - int(math.floor(math.log10(abs(v))))
    text = f"{v:.{max(decimals, 0) if v != 0 else digits - 1}f}"
    return f"{text} {LABELS.get(unit, unit)}".rstrip()


def uncertainty(u: float, unit: str = "") -> str:
    """An uncertainty (or a budget share) alone: two significant digits ('0.10 K')."""
    return number(u, unit, 2)


def signed(value: float, unit: str = "", decimals: int = 1) -> str:
    """A signed difference with fixed decimals ('+1.2 %')."""
    if value is None or not math.isfinite(value):
        return "—"
    return (f"{_clean(round(float(value), decimals)):+.{decimals}f} "
            f"{LABELS.get(unit, unit)}").rstrip()


def quantity(value_si: float, u_si: float | None, unit: str, kind: str,
             delta: bool = False) -> str:
    """An SI value (and uncertainty) shown in ``unit`` (a unit of ``kind``).

    ``delta`` shows a temperature difference (in K for degC and K).
    """
    if value_si is None or not math.isfinite(value_si):
        return "—"
    v = float(from_si(value_si, unit, kind, delta=delta))
    u = None if u_si is None else float(from_si(u_si, unit, kind, delta=True))
    shown = ("K" if unit in ("degC", "K") else unit) if delta else unit
    return value_u(v, u, shown) if u is not None else number(v, shown)


def count(n: int, noun: str) -> str:
    """'1 run', '3 runs', '0 points': a count with its noun in the right number."""
    return f"{n} {noun if n == 1 else PLURALS.get(noun, noun + 's')}"


#: Nouns whose plural is not the noun + 's'.
PLURALS = {"is": "are", "was": "were", "analysis": "analyses"}


def _round_sig(x: float, digits: int) -> float:
    if x == 0 or not math.isfinite(x):
        return x
    return round(x, digits - 1 - int(math.floor(math.log10(abs(x)))))


def _clean(x: float) -> float:
    """No '-0' on display."""
    return 0.0 if x == 0 else x
