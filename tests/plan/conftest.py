"""Fixtures for the plan tests: a command stack with recorders of its notifications."""

from __future__ import annotations

import pytest

from fourfold.plan.commands import CommandStack


@pytest.fixture(scope="session")
def recorded():
    """Build ``(stack, after, before)`` for a plan: the stack and the changes it announced
    after and before each state change (a factory with no state of its own, so one serves
    every test, hypothesis examples included)."""

    def build(plan):
        stack = CommandStack(plan)
        after, before = [], []
        stack.subscribe(after.append)
        stack.subscribe(before.append, before=True)
        return stack, after, before

    return build
