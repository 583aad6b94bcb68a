"""Self-test of the engine against published reference cases.

Each case lives in one TOML file under ``references/`` (JCGM 101:2008 clause 9
examples, JCGM 100:2008 Table G.2, G.4.1 and H.1) with its citation, the inputs,
and the expected values with an absolute tolerance and the reason for it.

Every expected value carries its provenance (``mark``), one of :data:`MARKS`:

``checked``
    read in the text of the source; ``checked_against`` says where (document,
    clause, table or page).
``recalled``
    recalled from memory and not verified against the text.
``derived``
    computed exactly from the case's stated inputs; the numbers (and every
    tolerance that rests on a Monte Carlo standard error) are recomputed by
    ``tools/reference_tolerances.py``.

The file-level ``mark`` says the same of the case's inputs (model and input
distributions). This module reads the files, runs the engine and returns one
:class:`CheckRow` per expected value, with its provenance in words; presenting
the rows is the caller's job.
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from importlib.abc import Traversable
from pathlib import Path

import numpy as np

from budget.errors import BudgetInputError, field_error
from budget.propagation import linear, monte_carlo, validate
from budget.reference_models import DISTRIBUTIONS as _DISTRIBUTIONS
from budget.reference_models import MODELS
from budget.reference_models import SD_FACTOR as _SD_FACTOR

__all__ = ["Citation", "Expected", "Case", "CheckRow", "MODELS", "MARKS", "default_folder",
           "load_case", "load_cases", "case_inputs", "run_case", "run_cases"]


MARKS = ("checked", "recalled", "derived")
"""Allowed provenance marks of a reference value (see the module docstring)."""

# --- data ------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Citation:
    """Where a case is published."""

    document: str
    clause: str
    table: str = ""

    def __str__(self) -> str:
        return ", ".join(s for s in (self.document, self.clause, self.table) if s)


@dataclass(frozen=True)
class Expected:
    """One reference value of a case (checked, recalled or derived), with its absolute tolerance."""

    quantity: str
    value: float | bool
    tolerance: float
    tolerance_reason: str
    mark: str
    n_dig: int | None = None
    interval: str | None = None
    checked_against: str = ""

    @property
    def provenance(self) -> str:
        """The mark in words, as the self-test prints it."""
        if self.mark == "checked":
            return f"checked against {self.checked_against}"
        if self.mark == "recalled":
            return "recalled from memory, unverified"
        return "derived from the stated inputs"


@dataclass(frozen=True)
class Case:
    """A reference case read from one TOML file."""

    id: str
    title: str
    citation: Citation
    mark: str
    model: str
    inputs: tuple[tuple[str, str, tuple[tuple[str, float | None], ...]], ...]
    p: float
    expected: tuple[Expected, ...]
    trials: int | None = None
    n_dig: int = 2
    interval: str = "symmetric"
    path: Path | None = field(default=None, compare=False)


@dataclass(frozen=True)
class CheckRow:
    """One comparison of the engine with a reference value."""

    case_id: str
    source: str
    quantity: str
    reference: float | bool
    computed: float | bool
    tolerance: float
    passed: bool
    mark: str = ""
    provenance: str = ""


def default_folder():
    """The shipped reference cases (:func:`budget.resources.references`), for any install."""
    from budget.resources import references

    return references()


def _need(table: Mapping, key: str, where: str) -> object:
    if key not in table:
        raise field_error(key, "present", None, where)
    return table[key]


def load_case(path: Path | str | Traversable) -> Case:
    """Read one case file.

    Parameters
    ----------
    path : path-like
        A TOML file with ``id``, ``title``, ``[citation]``, ``mark``, ``model``,
        ``p``, ``[inputs.NAME]`` tables and ``[[expected]]`` entries.

    Returns
    -------
    Case

    Raises
    ------
    BudgetInputError
        For a missing key, an unknown model or distribution, or a bad tolerance.
    """
    if isinstance(path, str):
        path = Path(path)
    with path.open("rb") as fh:
        data = tomllib.load(fh)
    where = f"[{path.name}]"
    cit = _need(data, "citation", where)
    model = str(_need(data, "model", where))
    if model not in MODELS:
        raise field_error("model", f"one of {sorted(MODELS)}", model, where)
    inputs = []
    for name, spec in dict(_need(data, "inputs", where)).items():
        kind = str(_need(spec, "distribution", f"[inputs.{name}] of {where}"))
        if kind not in _DISTRIBUTIONS:
            raise field_error("distribution", f"one of {sorted(_DISTRIBUTIONS)}", kind,
                              f"[inputs.{name}] of {where}")
        params = tuple((k, v) for k, v in spec.items() if k != "distribution")
        inputs.append((name, kind, params))
    mc = data.get("monte_carlo", {})
    n_dig = int(mc.get("n_dig", 2))
    expected = []
    for i, e in enumerate(_need(data, "expected", where)):
        w = f"[[expected]] #{i + 1} of {where}"
        tol = float(_need(e, "tolerance", w))
        if not (math.isfinite(tol) and tol >= 0):
            raise field_error("tolerance", "a number >= 0", tol, w)
        value = _need(e, "value", w)
        mark = str(_need(e, "mark", w))
        if mark not in MARKS:
            raise field_error("mark", f"one of {list(MARKS)}", mark, w)
        where_checked = str(e.get("checked_against", "")).strip()
        if mark == "checked" and not where_checked:
            raise field_error("checked_against", "the document, clause and table read",
                              None, w)
        expected.append(Expected(
            quantity=str(_need(e, "quantity", w)),
            value=value if isinstance(value, bool) else float(value),
            tolerance=tol, tolerance_reason=str(_need(e, "tolerance_reason", w)),
            mark=mark, n_dig=e.get("n_dig"), interval=e.get("interval"),
            checked_against=where_checked,
        ))
    case_mark = str(_need(data, "mark", where))
    if case_mark not in MARKS:
        raise field_error("mark", f"one of {list(MARKS)}", case_mark, where)
    return Case(
        id=str(_need(data, "id", where)), title=str(data.get("title", "")),
        citation=Citation(str(cit.get("document", "")), str(cit.get("clause", "")),
                          str(cit.get("table", ""))),
        mark=case_mark, model=model, inputs=tuple(inputs),
        p=float(_need(data, "p", where)), expected=tuple(expected),
        trials=mc.get("trials"), n_dig=n_dig, interval=str(mc.get("interval", "symmetric")),
        path=path,
    )


def load_cases(folder: Path | str | None = None) -> list[Case]:
    """Read every ``jcgm*.toml`` case file of ``folder``, sorted by file name.

    Parameters
    ----------
    folder : path-like, optional
        Defaults to :func:`default_folder`.

    Returns
    -------
    list of Case
    """
    folder = default_folder() if folder is None else Path(folder)
    if not folder.is_dir():
        raise field_error("folder", "an existing folder of reference cases", str(folder))
    files = sorted((f for f in folder.iterdir() if f.name.startswith("jcgm") and f.name.endswith(".toml")),
                   key=lambda f: f.name)
    return [load_case(f) for f in files]


def case_inputs(case: Case) -> dict[str, object]:
    """The engine's input mapping for a case: names to distribution objects.

    Notes
    -----
    A Rectangular, Triangular or Arcsine input may be given by ``mean`` and
    ``sd`` instead of ``low`` and ``high``: half-width = sd·√3, √6, √2
    (JCGM 101 6.4.2, 6.4.4, 6.4.6).
    """
    out: dict[str, object] = {}
    for name, kind, params in case.inputs:
        kw = dict(params)
        if kind in _SD_FACTOR and "sd" in kw:
            mean, half = float(kw.pop("mean", 0.0)), float(kw.pop("sd")) * _SD_FACTOR[kind]
            kw["low"], kw["high"] = mean - half, mean + half
        try:
            out[name] = _DISTRIBUTIONS[kind](**kw)
        except TypeError as exc:
            raise field_error("parameters", f"those of {kind}", sorted(kw),
                              f"[inputs.{name}] of case {case.id}") from exc
    return out


class _Runner:
    """Runs each method of one case at most once and looks quantities up."""

    def __init__(self, case: Case, rng: np.random.Generator) -> None:
        self.case, self.rng = case, rng
        self.model = MODELS[case.model]
        self.inputs = case_inputs(case)
        self._cache: dict[str, object] = {}

    def lin(self, order: str):
        if order not in self._cache:
            self._cache[order] = linear(self.model, self.inputs, p=self.case.p,
                                        second_order=(order == "second_order"))
        return self._cache[order]

    def mc(self):
        if "mc" not in self._cache:
            self._cache["mc"] = monte_carlo(self.model, self.inputs, p=self.case.p,
                                            trials=self.case.trials, rng=self.rng,
                                            n_dig=self.case.n_dig)
        return self._cache["mc"]

    def value(self, e: Expected) -> float | bool:
        parts = e.quantity.split(".")
        head, rest = parts[0], parts[1:]
        if head == "linear":
            order = "first_order"
            if rest and rest[0] == "second_order":
                order, rest = "second_order", rest[1:]
            lin = self.lin(order)
            if rest[:1] == ["contribution"] and len(rest) == 2:
                rows = {r.name: r for r in lin.rows}
                if rest[1] in rows:
                    return rows[rest[1]].contribution
            elif rest[:1] == ["interval"] and len(rest) == 2 and rest[1] in ("low", "high"):
                return lin.interval[0 if rest[1] == "low" else 1]
            elif len(rest) == 1 and rest[0] in ("estimate", "u", "nu_eff", "k", "U"):
                return float(getattr(lin, rest[0]))
        elif head == "mc":
            mc = self.mc()
            if len(rest) == 1 and rest[0] in ("estimate", "u"):
                return float(getattr(mc, rest[0]))
            if len(rest) == 2 and rest[0] in ("interval", "shortest") and rest[1] in ("low", "high"):
                return getattr(mc, rest[0])[0 if rest[1] == "low" else 1]
        elif head in ("validated", "validation") and rest and rest[0] in ("first_order",
                                                                         "second_order"):
            v = validate(self.lin(rest[0]), self.mc(), n_dig=e.n_dig or self.case.n_dig,
                         interval=e.interval or self.case.interval)
            if head == "validated" and len(rest) == 1:
                return v.validated
            if head == "validation" and len(rest) == 2 and rest[1] in ("d_low", "d_high", "delta"):
                return float(getattr(v, rest[1]))
        raise field_error("quantity", "a known quantity such as 'linear.u' or 'mc.shortest.low'",
                          e.quantity, f"case {self.case.id}")


def run_case(case: Case, *, rng: np.random.Generator) -> list[CheckRow]:
    """Run the engine on one case and compare with every expected value.

    Parameters
    ----------
    case : Case
    rng : numpy.random.Generator
        Source of random numbers for the Monte Carlo runs.

    Returns
    -------
    list of CheckRow
        A boolean expectation passes when equal; a number when
        ``|computed − published| <= tolerance``.
    """
    runner = _Runner(case, rng)
    rows = []
    for e in case.expected:
        got = runner.value(e)
        if isinstance(e.value, bool):
            passed = bool(got) == e.value
        else:
            # equal infinities (nu_eff = inf) pass; NaN never does
            passed = bool(float(got) == e.value or abs(float(got) - e.value) <= e.tolerance)
        label = e.quantity if e.n_dig is None else f"{e.quantity} (n_dig = {e.n_dig})"
        rows.append(CheckRow(case_id=case.id, source=str(case.citation), quantity=label,
                             reference=e.value, computed=got, tolerance=e.tolerance,
                             passed=passed, mark=e.mark, provenance=e.provenance))
    return rows


def run_cases(cases: list[Case], *, rng: np.random.Generator) -> list[CheckRow]:
    """Run :func:`run_case` on every case, in order.

    Parameters
    ----------
    cases : list of Case
        For instance ``load_cases()``.
    rng : numpy.random.Generator
        Shared by all Monte Carlo runs, so one seed reproduces the whole self-test.

    Returns
    -------
    list of CheckRow
    """
    if not isinstance(rng, np.random.Generator):
        raise BudgetInputError(f"The 'rng' argument must be a numpy.random.Generator. Got {rng!r}.")
    rows: list[CheckRow] = []
    for case in cases:
        rows.extend(run_case(case, rng=rng))
    return rows
