"""Recompute the derived numbers and tolerances of the reference case files (references/*.toml).

Every ``derived`` value of a case file, and every tolerance that rests on a Monte Carlo
standard error, is computed here from the case's stated inputs, so that none comes from an
offline run nobody can repeat. Run it from the repository root::

    python tools/reference_tolerances.py                  # analytic values, a few seconds
    python tools/reference_tolerances.py --replications 40  # also the JCGM 101 9.3 study

It prints, for each (case, quantity), the tolerance computed here beside the one in the
case file. ``tests/reference/test_tolerance_script.py`` imports :func:`tolerances` and
checks that every file tolerance lies between the computed value and 10 % above it (a
tolerance rounded up to two or three significant digits), and that the exact numbers
quoted in the case files' comments and reasons are those computed here.

Formulas (standard errors, asymptotic normal theory):

* mean of M trials: u/√M;
* standard deviation of M trials: u·√((κ − 1)/(4M)), κ the output's kurtosis (3 for a
  normal output, which gives the familiar u·√(1/(2M)));
* a sample quantile at tail probability p: √(p(1 − p)/M)/f(y_p), f the output density;
* a value quoted to n digits carries half a unit of its last digit.

A tolerance is four standard errors (a correct engine fails with probability below 10⁻⁴ per
value), combined in quadrature over our run and the published run (taken as M = 10⁶) when a
Monte Carlo value is compared with a published Monte Carlo value, plus half a unit of the
published value's last digit.

The endpoints of the shortest 95 % interval of JCGM 101 9.3 have no simple standard error
(the density of its flat-topped output is nearly equal along the top): their spread comes
from ``--replications R`` runs of M = 10⁶ trials with seeds 0 … R−1. Without that option the
spread measured with 40 replications (0.0011, rounded up) is used.
"""

from __future__ import annotations

import argparse
import math
import sys
from math import comb, factorial, sqrt
from pathlib import Path

from scipy import integrate, optimize, stats

ROOT = Path(__file__).resolve().parents[1]
K = 4.0          # standard errors per tolerance
M_OURS = 200_000  # trials of the JCGM 101 9.2 cases (their [monte_carlo] tables)
M_9_3 = 1_000_000
M_PUBLISHED = 1_000_000  # the published runs, taken as 10^6 trials (recalled, JCGM 101 9.2, 9.3)
SHORTEST_SD_9_3 = 0.0011  # sd of a shortest-interval endpoint at M = 1e6, 40 replications


# --- exact output distributions ---------------------------------------------------------------

def irwin_hall_cdf(x: float, n: int) -> float:
    """CDF of the sum of n independent U(0, 1)."""
    if x <= 0:
        return 0.0
    if x >= n:
        return 1.0
    return sum((-1) ** k * comb(n, k) * (x - k) ** n for k in range(int(x) + 1)) / factorial(n)


def irwin_hall_pdf(x: float, n: int) -> float:
    if x <= 0 or x >= n:
        return 0.0
    return sum((-1) ** k * comb(n, k) * (x - k) ** (n - 1) for k in range(int(x) + 1)) / factorial(n - 1)


def rect_sum_cdf(y: float, n: int) -> float:
    """CDF of the sum of n rectangular inputs of mean 0 and sd 1 (half-width √3)."""
    w = 2 * sqrt(3.0)
    return irwin_hall_cdf((y + n * sqrt(3.0)) / w, n)


def rect_sum_pdf(y: float, n: int) -> float:
    w = 2 * sqrt(3.0)
    return irwin_hall_pdf((y + n * sqrt(3.0)) / w, n) / w


def sum_9_2_4_cdf(y: float) -> float:
    """JCGM 101 9.2.4: three rectangular inputs of sd 1 plus one of sd 10 (half-width a = 10√3)."""
    a = 10 * sqrt(3.0)
    return integrate.quad(lambda t: rect_sum_cdf(y - t, 3), -a, a, limit=200)[0] / (2 * a)


def sum_9_2_4_pdf(y: float) -> float:
    a = 10 * sqrt(3.0)
    return (rect_sum_cdf(y + a, 3) - rect_sum_cdf(y - a, 3)) / (2 * a)


def exact_outputs() -> dict[str, float]:
    """Upper 97.5 % quantiles and densities there of the JCGM 101 9.2 outputs."""
    q2 = 2.0 * stats.norm.ppf(0.975)
    q3 = optimize.brentq(lambda y: rect_sum_cdf(y, 4) - 0.975, 0.0, 4 * sqrt(3.0), xtol=1e-14)
    q4 = optimize.brentq(lambda y: sum_9_2_4_cdf(y) - 0.975, 5.0, 20.0, xtol=1e-12)
    return {"q_9.2.2": q2, "f_9.2.2": stats.norm.pdf(q2, scale=2.0),
            "q_9.2.3": q3, "f_9.2.3": rect_sum_pdf(q3, 4),
            "q_9.2.4": q4, "f_9.2.4": sum_9_2_4_pdf(q4)}


# --- standard errors ----------------------------------------------------------------------------

def se_mean(u: float, m: int) -> float:
    return u / sqrt(m)


def se_sd(u: float, m: int, kurtosis: float = 3.0) -> float:
    return u * sqrt((kurtosis - 1.0) / (4.0 * m))


def se_quantile(p_tail: float, m: int, density: float) -> float:
    return sqrt(p_tail * (1.0 - p_tail) / m) / density


def half_unit(quoted: str) -> float:
    """Half a unit of the last digit of a value written as quoted, e.g. '3.92' -> 0.005."""
    decimals = len(quoted.split(".")[1]) if "." in quoted else 0
    return 0.5 * 10.0 ** (-decimals)


# --- JCGM 100 derived values ---------------------------------------------------------------------

def welch_satterthwaite(contributions: list[float], dofs: list[float]) -> float:
    u2 = sum(c * c for c in contributions)
    return u2 * u2 / sum(c**4 / v for c, v in zip(contributions, dofs, strict=True) if math.isfinite(v))


def g41_values() -> dict[str, float]:
    """JCGM 100 G.4.1: u_c and ν_eff from the rounded inputs, and over their rounding box."""
    rel, dof = [0.25, 0.57, 0.82], [9.0, 4.0, 14.0]
    u = sqrt(sum(r * r for r in rel))
    nus = [welch_satterthwaite([a, b, c], dof)
           for a in (0.245, 0.255) for b in (0.565, 0.575) for c in (0.815, 0.825)]
    ks = [stats.t.ppf(0.975, math.floor(v)) for v in nus] + [stats.t.ppf(0.975, v) for v in nus]
    return {"u": u, "nu_eff": welch_satterthwaite(rel, dof),
            "nu_eff_rounded_u": 1.03**4 / sum(r**4 / v for r, v in zip(rel, dof, strict=True)),
            "nu_box_low": min(nus), "nu_box_high": max(nus), "k_low": min(ks), "k_high": max(ks)}


def h1_values() -> dict[str, float]:
    """JCGM 100 H.1 (inputs of the case file): contributions, u_c, ν_eff, U_99, second order."""
    l_s, alpha_s, theta = 50_000_623.0, 11.5e-6, -0.1
    u_da, u_dt = 1e-6 / sqrt(3.0), 0.05 / sqrt(3.0)
    u_as, u_th = 2e-6 / sqrt(3.0), math.hypot(0.2, 0.5 / sqrt(2.0))
    c = {"l_s": 25.0, "d": 9.7, "delta_alpha": abs(l_s * theta) * u_da, "delta_theta": l_s * alpha_s * u_dt}
    nu = {"l_s": 18.0, "d": 25.6, "delta_alpha": 50.0, "delta_theta": 2.0}
    u = sqrt(sum(v * v for v in c.values()))
    nu_eff = welch_satterthwaite(list(c.values()), list(nu.values()))
    second = sqrt(u * u + (l_s * u_da * u_th) ** 2 + (l_s * u_as * u_dt) ** 2)
    return {**{f"contribution.{k}": v for k, v in c.items()}, "u": u, "nu_eff": nu_eff,
            "U": stats.t.ppf(0.995, math.floor(nu_eff)) * u, "second_order.u": second,
            "cross.delta_alpha.theta": l_s * u_da * u_th, "cross.alpha_s.delta_theta": l_s * u_as * u_dt}


# --- JCGM 101 9.3 replication study -------------------------------------------------------------

def replicate_9_3(replications: int) -> dict[str, float]:
    """Spread of y, u(y) and the shortest-interval endpoints over seeds 0 … R−1 at M = 10⁶."""
    import numpy as np

    from budget.propagation import monte_carlo
    from budget.reference_cases import case_inputs, load_case
    from budget.reference_models import MODELS

    case = load_case(ROOT / "references" / "jcgm101_9_3_mass.toml")
    runs = [monte_carlo(MODELS[case.model], case_inputs(case), p=case.p, trials=M_9_3,
                        rng=np.random.default_rng(seed)) for seed in range(replications)]
    a = np.array([[r.estimate, r.u, *r.shortest] for r in runs])
    sd = a.std(axis=0, ddof=1)
    return {"estimate": sd[0], "u": sd[1], "shortest": float(max(sd[2], sd[3]))}


# --- the tolerances -----------------------------------------------------------------------------

def tolerances(shortest_sd: float = SHORTEST_SD_9_3) -> dict[tuple[str, str], float]:
    """The tolerance of each Monte Carlo or rounded value, as computed from its reason."""
    ex = exact_outputs()
    out: dict[tuple[str, str], float] = {}
    both = sqrt(2.0)  # our run and the published run, same M = 1e6 (JCGM 101 9.3)
    for cid, u, key, quoted in (("jcgm101-9.2.2", 2.0, "9.2.2", "3.92"),
                                ("jcgm101-9.2.3", 2.0, "9.2.3", "3.88"),
                                ("jcgm101-9.2.4", sqrt(103.0), "9.2.4", "17.0")):
        f = ex[f"f_{key}"]
        out[(cid, "mc.u")] = K * se_sd(u, M_OURS - 1)
        endpoint = half_unit(quoted) + K * math.hypot(se_quantile(0.025, M_OURS, f),
                                                      se_quantile(0.025, M_PUBLISHED, f))
        out[(cid, "mc.interval.low")] = out[(cid, "mc.interval.high")] = endpoint
    out[("jcgm101-9.2.2", "mc.estimate")] = K * se_mean(2.0, M_OURS)
    out[("jcgm101-9.2.3", "validation.first_order.d_high")] = K * se_quantile(0.025, M_OURS, ex["f_9.2.3"])
    u93, kurt93 = 0.0754, 3.1  # published u (recalled) and the output's kurtosis (replications)
    out[("jcgm101-9.3", "mc.estimate")] = half_unit("1.2341") + K * both * se_mean(u93, M_9_3)
    out[("jcgm101-9.3", "mc.u")] = half_unit("0.0754") + K * both * se_sd(u93, M_9_3, kurt93)
    out[("jcgm101-9.3", "mc.shortest.low")] = out[("jcgm101-9.3", "mc.shortest.high")] = (
        half_unit("1.0834") + K * both * shortest_sd)
    return out


def _case_tolerances() -> dict[tuple[str, str], float]:
    sys.path.insert(0, str(ROOT))
    from budget.reference_cases import load_cases

    return {(c.id, e.quantity): e.tolerance for c in load_cases(ROOT / "references") for e in c.expected}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--replications", type=int, default=0,
                    help="run the JCGM 101 9.3 replication study with this many seeds (e.g. 40)")
    args = ap.parse_args(argv)
    shortest = SHORTEST_SD_9_3
    if args.replications:
        rep = replicate_9_3(args.replications)
        print(f"JCGM 101 9.3, {args.replications} replications at M = 1e6: sd of y {rep['estimate']:.2g}, "
              f"of u {rep['u']:.2g}, of a shortest-interval endpoint {rep['shortest']:.2g} "
              f"(used here: {SHORTEST_SD_9_3})")
    print("exact outputs:", {k: round(v, 6) for k, v in exact_outputs().items()})
    print("JCGM 100 G.4.1:", {k: round(v, 4) for k, v in g41_values().items()})
    print("JCGM 100 H.1:", {k: round(v, 3) for k, v in h1_values().items()})
    files = _case_tolerances()
    print(f"{'case':16} {'quantity':32} {'computed':>10} {'in file':>10}")
    bad = 0
    for key, tol in tolerances(shortest).items():
        have = files.get(key, math.nan)
        ok = tol <= have <= 1.1 * tol
        bad += not ok
        print(f"{key[0]:16} {key[1]:32} {tol:10.3g} {have:10.3g} {'' if ok else '  <- differs'}")
    return 1 if bad else 0


if __name__ == "__main__":
    raise SystemExit(main())
