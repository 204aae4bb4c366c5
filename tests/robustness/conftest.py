"""Counting what the robustness suite really tries (printed at the end of the run).

The README's robustness figures come from this summary, not from estimates.
"""

from __future__ import annotations

from collections import Counter

import pytest

TRIED: Counter = Counter()
"""Cases run, by group: ``malformed`` inputs, ``valid`` variants, ``infeasible`` specifications."""


@pytest.fixture
def tally():
    """``tally("malformed")`` counts one case of a group."""
    def add(group: str, n: int = 1) -> None:
        TRIED[group] += n
    return add


def pytest_terminal_summary(terminalreporter, exitstatus, config):
    if TRIED:
        parts = ", ".join(f"{n} {group}" for group, n in sorted(TRIED.items()))
        terminalreporter.write_line(f"robustness cases tried: {parts}")
