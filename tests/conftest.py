"""Shared test helpers: the unit-aware assertion and the reference cases."""

from __future__ import annotations

import json
import pathlib
import sys
import warnings

import pytest

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))  # tests/references.py


def field_cases() -> list[dict]:
    return json.loads((HERE / "cases" / "field_cases.json").read_text())


def assert_close(actual, desired, rtol: float, atol: float = 0.0, what: str = "") -> None:
    """One assertion helper: quantities (pint) or floats, with the tolerance stated."""
    from pint.testing import assert_allclose

    import capbench as cb

    if not hasattr(actual, "units"):
        actual = cb.Q_(actual, "")
    if not hasattr(desired, "units"):
        desired = cb.Q_(desired, "")
    assert_allclose(actual, desired.to(actual.units), rtol=rtol, atol=atol, msg=what)


@pytest.fixture(autouse=True)
def _quiet_capbench_warnings():
    # capbench warns about suspicious input; tests that care use pytest.warns
    import capbench as cb

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", cb.CapbenchWarning)
        yield


def _hypothesis_profiles() -> None:
    import os

    from hypothesis import settings

    # "ci" is derandomised: make test gives the same verdict on every run, so a submission
    # never fails on a draw; "fuzz" (make fuzz) explores new random inputs each time, and
    # what it finds is kept in the tests as an @example.
    settings.register_profile("ci", max_examples=12, deadline=None, derandomize=True)
    settings.register_profile("fuzz", max_examples=400, deadline=None)
    settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


_hypothesis_profiles()
