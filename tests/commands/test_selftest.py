"""The selftest runner: loading the reference cases and judging the engine against them.

The reference values themselves are checked (with sources and tolerances) in
``tests/reference/test_jcgm100.py`` and ``tests/reference/test_jcgm101.py``;
here: the runner passes a correct engine, fails a wrong expectation, and rejects
malformed case files with :class:`BudgetInputError`; the command prints every value's
provenance and its own seed, and never calls a recalled value "published".
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from budget.cli import main
from budget.commands.selftest import SELFTEST_SEED
from budget.errors import BudgetInputError
from budget.reference_cases import (
    MARKS,
    CheckRow,
    default_folder,
    load_case,
    load_cases,
    run_case,
    run_cases,
)


@pytest.fixture(scope="module")
def cases():
    return load_cases()


def test_every_case_file_loads_with_citation_and_marks(cases):
    ids = {c.id for c in cases}
    assert {"jcgm101-9.2.2", "jcgm101-9.2.3", "jcgm101-9.2.4", "jcgm101-9.3", "jcgm100-H.1",
            "jcgm100-G.4.1", "jcgm100-G.2-95-inf"} <= ids
    assert len(ids) == len(cases) == len(list(default_folder().glob("jcgm*.toml")))
    for c in cases:
        assert c.citation.document.startswith(("JCGM 100:2008", "JCGM 101:2008")), c.id
        assert c.citation.clause, c.id
        assert c.mark in MARKS, c.id
        for e in c.expected:
            assert e.mark in MARKS, (c.id, e.quantity)
            assert e.tolerance_reason.strip(), (c.id, e.quantity)
            assert (e.mark == "checked") == bool(e.checked_against), (c.id, e.quantity)


def test_all_cases_pass(cases):
    # Timing of the self-test belongs to benchmarks/, not here (a timed assert fails for load).
    rows = run_cases(cases, rng=np.random.default_rng(2008))
    assert rows and all(isinstance(r, CheckRow) for r in rows)
    failed = [r for r in rows if not r.passed]
    assert not failed, failed


def test_selftest_prints_each_values_provenance_and_its_seed(capsys, cases):
    code = main(["selftest"])
    out = capsys.readouterr().out
    assert code == 0, out
    assert f"seed {SELFTEST_SEED}" in out
    assert "published" not in out.lower()
    words = {"checked": "checked against", "recalled": "recalled from memory, unverified",
             "derived": "derived from the stated inputs"}
    lines = out.splitlines()
    for c in cases:
        for e in c.expected:
            assert any(c.id in ln and words[e.mark] in ln for ln in lines), (c.id, e.quantity)
    n = {m: sum(e.mark == m for c in cases for e in c.expected) for m in MARKS}
    assert (f"{n['checked']} checked against their source, {n['recalled']} recalled from memory "
            f"and unverified, {n['derived']} derived") in out


def test_a_wrong_expected_value_fails(cases):
    case = next(c for c in cases if c.id == "jcgm100-H.1")
    wrong = [dataclasses.replace(e, value=e.value + 2 * e.tolerance + 1.0)
             if e.quantity == "linear.u" else e for e in case.expected]
    rows = run_case(dataclasses.replace(case, expected=tuple(wrong)),
                    rng=np.random.default_rng(0))
    by_q = {r.quantity: r for r in rows}
    assert not by_q["linear.u"].passed
    assert all(r.passed for r in rows if r.quantity != "linear.u")


def test_a_wrong_verdict_fails(cases):
    case = next(c for c in cases if c.id == "jcgm101-9.2.4")
    flipped = tuple(dataclasses.replace(e, value=not e.value) if isinstance(e.value, bool) else e
                    for e in case.expected)
    rows = run_case(dataclasses.replace(case, expected=flipped), rng=np.random.default_rng(0))
    assert [r.passed for r in rows if isinstance(r.reference, bool)] == [False, False]


def _write(tmp_path, text):
    path = tmp_path / "jcgm_bad.toml"
    path.write_text(text, encoding="utf-8")
    return path


GOOD = """
id = "x"
title = "t"
mark = "derived"
model = "sum"
p = 0.95
[citation]
document = "JCGM 100:2008 (GUM)"
clause = "5.1.2"
[inputs.a]
distribution = "Normal"
mean = 0.0
sd = 1.0
[[expected]]
quantity = "linear.u"
value = 1.0
tolerance = 1e-9
tolerance_reason = "one input with unit sensitivity"
mark = "derived"
"""


def test_a_minimal_case_file_runs(tmp_path):
    rows = run_case(load_case(_write(tmp_path, GOOD)), rng=np.random.default_rng(0))
    assert [(r.quantity, r.passed, r.mark) for r in rows] == [("linear.u", True, "derived")]


@pytest.mark.parametrize(("old", "new", "field"), [
    ('model = "sum"', 'model = "nope"', "model"),
    ('distribution = "Normal"', 'distribution = "Gaussian"', "distribution"),
    ('tolerance = 1e-9', 'tolerance = -1.0', "tolerance"),
    ('p = 0.95', '', "p"),
    ('sensitivity"\nmark = "derived"', 'sensitivity"\nmark = "[memory]"', "mark"),
    ('sensitivity"\nmark = "derived"', 'sensitivity"\nmark = "checked"', "checked_against"),
])
def test_malformed_case_files_raise(tmp_path, old, new, field):
    with pytest.raises(BudgetInputError, match=f"'{field}'"):
        load_case(_write(tmp_path, GOOD.replace(old, new)))


def test_unknown_quantity_and_parameters_raise(tmp_path):
    case = load_case(_write(tmp_path, GOOD.replace('"linear.u"', '"linear.spread"')))
    with pytest.raises(BudgetInputError, match="'quantity'"):
        run_case(case, rng=np.random.default_rng(0))
    case = load_case(_write(tmp_path, GOOD.replace("sd = 1.0", "width = 1.0")))
    with pytest.raises(BudgetInputError, match="'parameters'"):
        run_case(case, rng=np.random.default_rng(0))


def test_rng_must_be_a_generator(cases):
    with pytest.raises(BudgetInputError):
        run_cases(cases[:1], rng=42)


def test_missing_folder_raises(tmp_path):
    with pytest.raises(BudgetInputError, match="'folder'"):
        load_cases(tmp_path / "absent")
