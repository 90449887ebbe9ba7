"""A short fuzz run in the suite (the long one: python -m tests.fuzz --minutes N)."""

from __future__ import annotations

import random

from hypothesis import given, settings, strategies as st

from tests.fuzz import check_one, mutate, run, seeds
import pytest

pytestmark = pytest.mark.slow  # see pyproject.toml: deselect with -m 'not slow'


def test_mutated_worked_cases_for_thirty_seconds():
    counts = run(30.0, seed=1)
    assert counts["valid"] + counts["invalid"] > 50  # it really ran
    assert counts["invalid"] > 0  # and the mutations do break files


@settings(max_examples=150, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_hypothesis_mutations(seed):
    rnd = random.Random(seed)
    check_one(mutate(rnd.choice(seeds()), rnd))
