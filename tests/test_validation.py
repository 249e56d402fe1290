"""The verification cases of validation/ run with default settings and meet their tolerances.

References and sources are listed with each check in femheat/validate.py (exact series of
Carslaw & Jaeger 1959 and Incropera 6th ed. sec. 5.5-5.8; Incropera eq. 5.18; NAFEMS TNSB
Rev. 3 1990 tests T2, T3, T4; conservation of energy with the EN 1993-1-2 c(T) peak).
"""

from __future__ import annotations

import pytest

from femheat.validate import CHECKS, run_check


@pytest.mark.parametrize(
    "check",
    [pytest.param(c, marks=pytest.mark.slow) if c.slow else c for c in CHECKS],
    ids=[c.name for c in CHECKS],
)
def test_verification_case(check):
    outcome = run_check(check)
    assert outcome.passed, (
        f"{check.name}: femheat {outcome.value:.6g} vs reference {outcome.reference:.6g} "
        f"({check.source}); error {100 * outcome.error:+.3f} %, allowed "
        f"{100 * check.tolerance:g} %"
    )
