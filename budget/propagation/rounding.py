"""Rounding results for a statement (JCGM 100:2008 7.2.6)."""

from __future__ import annotations

import math
from decimal import ROUND_CEILING, ROUND_FLOOR, ROUND_HALF_EVEN, ROUND_HALF_UP, ROUND_UP, Decimal, localcontext

from budget.errors import field_error

__all__ = ["round_pair", "statement", "interval_statement", "outward_interval"]

_MODES = {"nearest": ROUND_HALF_UP, "up": ROUND_UP, "even": ROUND_HALF_EVEN}


def _exponent_for(value: float, digits: int) -> int:
    """Decimal exponent of the last kept digit when ``value`` keeps ``digits`` significant digits.

    Read from the decimal form of ``value`` (exact at any exponent, subnormals included);
    a value that rounds up into the next decade is handled by the caller.
    """
    return Decimal(repr(abs(value))).adjusted() - (digits - 1)


def round_pair(estimate: float, uncertainty: float, digits: int = 2,
               mode: str = "nearest") -> tuple[str, str]:
    """Round an uncertainty to ``digits`` significant digits and the estimate to match.

    Returns decimal strings, e.g. ``round_pair(1.23412, 0.001534) -> ("1.2341", "0.0015")``.

    Notes
    -----
    JCGM 100 7.2.6: at most two significant digits for the uncertainty; the
    estimate rounded to the same decimal place. ``mode="up"`` rounds the
    uncertainty up, which 7.2.6 allows ("it may sometimes be appropriate to round
    uncertainties up rather than to the nearest digit").
    """
    if digits not in (1, 2):
        raise field_error("digits", "1 or 2 (JCGM 100 7.2.6)", digits)
    if mode not in _MODES:
        raise field_error("mode", f"one of {sorted(_MODES)}", mode)
    if not (math.isfinite(uncertainty) and uncertainty > 0):
        raise field_error("uncertainty", "a finite number > 0", uncertainty)
    if not math.isfinite(estimate):
        raise field_error("estimate", "a finite number", estimate)
    e = _exponent_for(uncertainty, digits)
    y_in = Decimal(repr(estimate))
    with localcontext() as ctx:
        # Enough digits for the estimate at the place of u (the default 28 is not a limit of 7.2.6).
        ctx.prec = max(28, y_in.adjusted() - e + 4)
        quantum = Decimal(1).scaleb(e)
        u_dec = Decimal(repr(uncertainty)).quantize(quantum, rounding=_MODES[mode])
        if u_dec.adjusted() - (digits - 1) > e:  # rounded up into the next decade (9.96 -> 10)
            quantum = Decimal(1).scaleb(e + 1)
            u_dec = u_dec.quantize(quantum, rounding=_MODES[mode])
        y_dec = y_in.quantize(quantum, rounding=ROUND_HALF_EVEN)
    if y_dec.is_zero():
        y_dec = y_dec.copy_abs()  # -0.00001 at 0.0001 is "0.0000", not "-0.0000"
    return format(y_dec, "f"), format(u_dec, "f")


def statement(name: str, estimate: float, U: float, k: float, p: float, unit: str = "",
              digits: int = 2) -> str:
    """A result statement such as ``y = (1.2340 ± 0.0015) mg, k = 2.12, p ≈ 95 %``.

    Notes
    -----
    JCGM 100 7.2.4 (form of an expanded-uncertainty statement) and 7.2.6 (rounding).
    """
    y, u = round_pair(estimate, U, digits)
    unit_txt = f" {unit}" if unit else ""
    return f"{name} = ({y} ± {u}){unit_txt}, k = {k:.2f}, p ≈ {_percent(p)} %"


def interval_statement(name: str, estimate: float, u: float, interval: tuple[float, float],
                       p: float, unit: str = "", digits: int = 2) -> str:
    """A Monte Carlo statement: estimate, u and the coverage interval (JCGM 101 7.6–7.8).

    The interval's ends are given at the decimal place of u and rounded outward
    (:func:`outward_interval`), so the stated interval holds the computed one.
    """
    y, uu = round_pair(estimate, u, digits)
    places = max(0, -Decimal(uu).as_tuple().exponent)
    lo, hi = outward_interval(interval, places)
    unit_txt = f" {unit}" if unit else ""
    return (f"{name} = {y}{unit_txt}, u = {uu}{unit_txt}, "
            f"{_percent(p)} % coverage interval [{lo}, {hi}]{unit_txt}")


def outward_interval(interval: tuple[float, float], places: int) -> tuple[str, str]:
    """The ends of a coverage interval with ``places`` decimals, the low end rounded down and the high
    end rounded up.

    Notes
    -----
    Rounding the ends outward keeps the stated interval's coverage at least the computed one
    (common practice; from memory, JCGM 101 asks for the endpoints to be stated so that the
    interval is not made narrower by rounding; clause not verified here). E.g.
    [1.0834, 1.3826] at 3 decimals is [1.083, 1.383], [1.0839, 1.3821] is [1.083, 1.383] too.
    """
    lo, hi = (Decimal(repr(float(v))) for v in interval)
    quantum = Decimal(1).scaleb(-places)
    with localcontext() as ctx:
        ctx.prec = max(28, max(lo.adjusted(), hi.adjusted()) + places + 4)
        lo_d = lo.quantize(quantum, rounding=ROUND_FLOOR)
        hi_d = hi.quantize(quantum, rounding=ROUND_CEILING)
    if lo_d.is_zero():
        lo_d = lo_d.copy_abs()
    if hi_d.is_zero():
        hi_d = hi_d.copy_abs()
    return format(lo_d, "f"), format(hi_d, "f")


def _percent(p: float) -> str:
    v = 100.0 * p
    return f"{v:.0f}" if abs(v - round(v)) < 1e-9 else f"{v:g}"
