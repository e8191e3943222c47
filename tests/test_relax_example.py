"""The example examples/relaxation_fit.py on the invented QF-PU-11 demo.

The demo readings were made by fixtures/quillfield/make_demo.py from an invented material
(``PU_MODEL``: a Cole-Cole relaxation with a DC conductivity) by field solves of the
guarded cell, read through leads (``PU_LEADS``), plus invented scatter; the example must
recover that material within its stated uncertainties."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def _load(path: Path, name: str):
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def example():
    return _load(ROOT / "examples" / "relaxation_fit.py", "relaxation_fit_example")


@pytest.fixture(scope="module")
def demo():
    return _load(ROOT / "fixtures" / "quillfield" / "make_demo.py", "quillfield_make_demo")


def test_the_example_recovers_the_invented_material(example, demo):
    best = example.BEST
    assert best.label == "cole-cole + conductivity"
    for k, v in demo.PU_MODEL.items():
        assert abs(best.params[k].n - v) <= 3 * best.params[k].s, (k, best.params[k])
    assert example.RELAXATION.kk.consistent
    assert example.RELAXATION.monte_carlo.agrees, example.RELAXATION.monte_carlo.text()
    assert any("w^2 L C" in str(w.message) for w in example.WARNINGS)


def test_the_leads_file_values_are_the_demos(example, demo):
    leads = example.MEASUREMENT.leads
    assert leads.inductance == pytest.approx(demo.PU_LEADS["inductance"])
    assert leads.resistance == pytest.approx(demo.PU_LEADS["resistance"])
    assert leads.open_capacitance == pytest.approx(demo.PU_LEADS["open_capacitance"])


def test_dropping_the_correlations_understates_the_static_permittivity(example):
    """The points share the thickness and the area: eps_inf's uncertainty must keep that
    common part, which a fit weighted by the diagonal alone averages away."""
    full = example.BEST.params["eps_inf"].s
    plain = example.PLAIN.params["eps_inf"].s
    assert plain < 0.7 * full
