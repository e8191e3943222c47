"""The example examples/extract_permittivity.py on the invented Quillfield demo data.

The demo readings were made by fixtures/quillfield/make_demo.py from an invented
specimen (eps' and tan delta in ``TRUE_EPS_R``, ``TRUE_TAN_DELTA``) by field solves plus
invented scatter; the example must recover that specimen within its stated uncertainty.
"""

from __future__ import annotations

import importlib.util
import math
import sys
from pathlib import Path

import numpy as np
import pytest

import capbench as cb
from capbench import files

ROOT = Path(__file__).resolve().parents[1]


def _load(path: Path, name: str):
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def example():
    return _load(ROOT / "examples" / "extract_permittivity.py", "extract_permittivity_example")


@pytest.fixture(scope="module")
def demo():
    return _load(ROOT / "fixtures" / "quillfield" / "make_demo.py", "quillfield_make_demo")


def test_example_recovers_the_invented_specimen(example, demo):
    res = example.RESULT
    assert res.fem and len(res) == len(demo.FREQUENCIES)
    assert tuple(example.FREQUENCIES) == demo.FREQUENCIES
    for p, e, tan in zip(res.points, demo.TRUE_EPS_R, demo.TRUE_TAN_DELTA, strict=True):
        # within three standard uncertainties of the values the readings were made from
        assert abs(p.eps_r.n - e) < 3 * p.eps_r.s
        assert abs(p.tan_delta.n - tan) < 3 * p.tan_delta.s
        # a plausible polyethylene (handbook eps_r about 2.25 to 2.35; common practice)
        assert 2.25 < p.eps_r.n < 2.35
        assert p.budget.shares_total == pytest.approx(1.0, abs=1e-12)
        assert p.loss_budget.shares_total == pytest.approx(1.0, abs=1e-12)
        # the unshielded guarded cell collects extra flux: the closed form reads high
        assert -0.03 < p.correction < -0.005
        # fringing in air dilutes D: tan delta of the specimen is above D
        assert p.loss_correction > 0


def test_example_inputs_follow_the_measurement_file(example):
    m = example.MEASUREMENT
    t = example.THICKNESS.to("mm").magnitude
    assert t.n == pytest.approx(np.mean(m.thickness_readings) * 1e3, rel=1e-12)
    # type A of the five readings and the rectangular calibration in quadrature
    s_mean = np.std(m.thickness_readings, ddof=1) / math.sqrt(5) * 1e3
    assert t.s == pytest.approx(math.hypot(s_mean, 1.5e-3 / math.sqrt(3)), rel=1e-9)
    names = {r.name for r in example.RESULT[example.AT_1KHZ].budget.rows}
    assert {
        "micrometer calibration",
        "bridge C accuracy 1000 Hz",
        "electrode radius (drawing tolerance)",
    } <= names


def test_example_monte_carlo_and_report(example):
    mc = example.MONTE_CARLO
    p = example.RESULT[example.AT_1KHZ]
    assert mc.converged
    # nearly linear over the inputs' ranges (relative uncertainties about 1e-3)
    assert mc.adequate is True
    assert mc.u == pytest.approx(p.eps_r.s, rel=0.1)
    text = example.report()
    assert "QF-PE-03" in text and "Caution" in text and "Monte Carlo" in text


def test_measurement_reader_names_file_key_and_value(tmp_path):
    src = (ROOT / "fixtures" / "quillfield" / "qf-pe-03.toml").read_text()
    bad = tmp_path / "bad.toml"
    bad.write_text(src.replace('guard_gap = "0.5 mm"', 'guard_gap = "0.5 mmm"'))
    (tmp_path / "qf-pe-03_readings.csv").write_text(
        (ROOT / "fixtures" / "quillfield" / "qf-pe-03_readings.csv").read_text()
    )
    with pytest.raises(cb.FileFormatError, match=r"bad.toml, line \d+: \[fixture\].*0.5 mmm"):
        files.read_measurement(bad)
    bad.write_text(src.replace('schema = "capbench-measurement/1"', 'schema = "other/2"'))
    with pytest.raises(cb.FileFormatError, match="schema"):
        files.read_measurement(bad)
    good = tmp_path / "good.toml"
    good.write_text(src)
    rows = (tmp_path / "qf-pe-03_readings.csv").read_text().replace("20.61381", "20.6x381")
    (tmp_path / "qf-pe-03_readings.csv").write_text(rows)
    with pytest.raises(cb.FileFormatError, match=r"line 7: capacitance = '20\.6x381'"):
        files.read_measurement(good)
