"""Rule-file thresholds, relative thresholds and matrix class bounds refuse infinity and not-a-number.

The quantities are taken from the table of quantities a rule may name, one of each ordered kind (a time,
a temperature, a temperature difference, a number, a whole number).  Spellings: TOML 1.0 floats (inf,
+inf, -inf, nan, +nan, -nan) and texts as Python's float() and YAML write them, with and without a unit,
and a number too large for a float (1e999; IEEE 754 double, about 1.8e308); from memory.  The check is the
tool's own contract: the error names the rule's field and says a finite number is expected.
"""
from __future__ import annotations

import json

import pytest

from screening.verdict.quantities import _ORDERED, QUANTITIES, TEMPERATURE, TIME, DELTA_T
from screening.verdict.rule_file import RuleSetError, parse_rule_set

UNIT = {TIME: "h", TEMPERATURE: "degC", DELTA_T: "K"}
BARE = ["inf", "+inf", "-inf", "nan", "+nan", "-nan"]
TEXTS = ["inf", "-inf", "nan", "NaN", "Infinity", ".inf", "-.inf", ".nan", "1e999", "-1e999", "∞"]


def one_of_each_ordered_kind() -> list[str]:
    seen, out = set(), []
    for name, q in QUANTITIES.items():
        if q.dimension in _ORDERED and q.dimension not in seen:
            seen.add(q.dimension)
            out.append(name)
    assert seen == set(_ORDERED)
    return out


KINDS = one_of_each_ordered_kind()


def rule_text(quantity: str, threshold: str) -> str:
    return ('[rule_set]\nname = "t"\n\n[[rule]]\nid = "r1"\n'
            f'quantity = "{quantity}"\ncompare = ">"\nthreshold = {threshold}\n'
            'verdict = "review"\nreason = "x"\nsource = "site choice"\n')


def errors_of(text: str) -> dict[str, str]:
    with pytest.raises(RuleSetError) as info:
        parse_rule_set(text.encode())
    return dict(info.value.errors)


def spellings(quantity: str) -> list[str]:
    unit = UNIT.get(QUANTITIES[quantity].dimension)
    texts = [json.dumps(t + (f" {unit}" if unit else "")) for t in TEXTS]
    return BARE + texts + [json.dumps(t) for t in TEXTS]


@pytest.mark.parametrize("quantity", KINDS)
def test_non_finite_threshold_is_refused(quantity):
    for spelling in spellings(quantity):
        errors = errors_of(rule_text(quantity, spelling))
        assert list(errors) == ['rule #1 (id "r1").threshold'], (spelling, errors)
        message = errors['rule #1 (id "r1").threshold']
        assert "not a finite number" in message and "finite number is expected" in message, message


@pytest.mark.parametrize("quantity", [q for q in KINDS if QUANTITIES[q].dimension != TEMPERATURE])
def test_non_finite_relative_threshold_factor_is_refused(quantity):
    for spelling in BARE:
        errors = errors_of(rule_text(quantity, f'{{ of = "{quantity}", times = {spelling} }}'))
        assert list(errors) == ['rule #1 (id "r1").threshold.times'], (spelling, errors)
        assert "finite number is expected" in errors['rule #1 (id "r1").threshold.times']


@pytest.mark.parametrize("quantity", KINDS)
def test_non_finite_relative_threshold_offset_is_refused(quantity):
    dim = QUANTITIES[quantity].dimension
    unit = UNIT.get(DELTA_T if dim == TEMPERATURE else dim)
    for spelling in BARE + [json.dumps(t + (f" {unit}" if unit else "")) for t in TEXTS]:
        errors = errors_of(rule_text(quantity, f'{{ of = "{quantity}", plus = {spelling} }}'))
        assert list(errors) == ['rule #1 (id "r1").threshold.plus'], (spelling, errors)
        assert "finite number is expected" in errors['rule #1 (id "r1").threshold.plus']


@pytest.mark.parametrize("quantity", KINDS)
@pytest.mark.parametrize("bound", ["below", "up_to"])
def test_non_finite_matrix_class_bound_is_refused(quantity, bound):
    other = next(q for q in KINDS if q != quantity)
    unit = UNIT.get(QUANTITIES[quantity].dimension)
    good_other = json.dumps("1 " + UNIT[QUANTITIES[other].dimension]) if QUANTITIES[other].dimension in UNIT else "1"
    for spelling in spellings(quantity):
        text = ('[rule_set]\nname = "t"\n\n[[matrix]]\nid = "m1"\nsource = "site choice"\nreason = "x"\n'
                f'[matrix.rows]\nquantity = "{quantity}"\n'
                f'classes = [{{ name = "a", {bound} = {spelling} }}, {{ name = "b" }}]\n'
                f'[matrix.columns]\nquantity = "{other}"\n'
                f'classes = [{{ name = "c", below = {good_other} }}, {{ name = "d" }}]\n'
                '[matrix.verdicts]\na = ["pass", "review"]\nb = ["review", "fail"]\n')
        errors = errors_of(text)
        where = f'matrix #1 (id "m1").rows.classes[#1].{bound}'
        assert list(errors) == [where], (spelling, unit, errors)
        assert "finite number is expected" in errors[where]


def test_a_threshold_of_more_digits_than_python_reads_is_refused():
    # Python refuses to convert integers of more than 4300 decimal digits (its default limit, from memory)
    errors = errors_of(rule_text("limit_count", "7" * 5000))
    assert list(errors) == ["(file)"] and "finite number is expected" in errors["(file)"]
