"""Test-wide set-up: hypothesis profiles, and the check that the installed package
is the one under test.

Hypothesis profiles (choose with HYPOTHESIS_PROFILE=NAME; tests that give their own
``max_examples`` keep it): "default" and "ci" run 4 examples per class combination
of tests/test_pipeline_properties.py (352 in all), "ci" with a fixed seed so that CI
runs are repeatable; "slow" runs 25 per combination (2192 in all).
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, Phase, settings

_QUIET = [HealthCheck.too_slow, HealthCheck.data_too_large]
settings.register_profile("default", max_examples=4, deadline=None, suppress_health_check=_QUIET)
# CI does not shrink a failure (each try costs a solve, seconds with indexed roots):
# the failing example is printed as it was drawn, with its derive.solve(...) line
settings.register_profile("ci", max_examples=4, deadline=None, suppress_health_check=_QUIET,
                          derandomize=True, print_blob=True,
                          phases=[Phase.explicit, Phase.reuse, Phase.generate])
settings.register_profile("slow", max_examples=25, deadline=None, suppress_health_check=_QUIET)
_CI = os.environ.get("CI", "").lower() in ("1", "true", "yes")
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci" if _CI else "default"))


def pytest_configure(config: pytest.Config) -> None:
    """Under CI=true, refuse to test a source tree: the README's command must test the
    package as pip installed it into the environment running pytest."""
    if not _CI:
        return
    import derive

    where = Path(derive.__file__).resolve()
    prefix = Path(sys.prefix).resolve()
    if prefix not in where.parents:
        raise pytest.UsageError(
            f"CI=true: derive was imported from {where}, not from the environment at {prefix}; "
            "install it with pip install '.[test,cluster]' (not -e) and run pytest from that environment"
        )
