"""checker.sat.Sat: a value is read only from a model that exists."""

from __future__ import annotations

import pytest

from checker.engines.sat import DEFAULT_SOLVER, Sat


@pytest.mark.parametrize("name", [DEFAULT_SOLVER, "minisat22"])
def test_values_of_a_model(name):
    with Sat(name) as sat:
        a, b = sat.new_var(), sat.new_var()
        sat.add([a])
        sat.add([-a, -b])
        assert sat.solve()
        assert (sat.value(a), sat.value(-a), sat.value(b), sat.value(-b)) == (1, 0, 0, 1)
        assert (sat.value(sat.true), sat.value(-sat.true)) == (1, 0)
        assert sat.solve([b]) is False


def test_no_value_before_any_solve():
    with Sat() as sat:
        a = sat.new_var()
        sat.add([a])
        with pytest.raises(RuntimeError, match="nothing was solved"):
            sat.value(a)
        with pytest.raises(RuntimeError):
            sat.value(sat.true)


def test_no_value_after_unsat():
    with Sat() as sat:
        a = sat.new_var()
        sat.add([a])
        assert sat.solve()
        assert sat.value(a) == 1
        # The model of the earlier solve is stale once a solve fails.
        assert not sat.solve([-a])
        for lit in (a, -a, sat.true, -sat.true):
            with pytest.raises(RuntimeError, match="unsatisfiable"):
                sat.value(lit)
        assert sat.solve([a]) and sat.value(a) == 1


def test_no_value_of_an_unknown_variable():
    with Sat() as sat:
        a = sat.new_var()
        sat.add([a])
        assert sat.solve()
        for lit in (0, a + 1, -(a + 1), 10**6):
            with pytest.raises(LookupError):
                sat.value(lit)
        # made after the solve: the model says nothing about it
        later = sat.new_var()
        with pytest.raises(LookupError, match="did not exist"):
            sat.value(later)
        assert sat.solve() and sat.value(later) in (0, 1)


def test_a_variable_in_no_clause_reads_as_either_value():
    with Sat() as sat:
        a, free = sat.new_var(), sat.new_var()
        sat.add([a])
        assert sat.solve()
        assert sat.value(free) in (0, 1)
