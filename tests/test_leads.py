"""The lead and fixture correction (capbench.dispersion.LeadCorrection) and the
measurement file's [leads] table.

Sources: the series resonance of a capacitor behind an inductance, C_app = C / (1 -
w^2 L C) (circuit theory: Z = j w L + 1 / (j w C), textbook closed form); the
open-short compensation Z_m = Z_s + 1 / (Y_x + Y_o) (common practice of impedance
meters, no source), written here with Python's complex numbers as the second method.
"""

from __future__ import annotations

import math
import shutil
import warnings
from pathlib import Path

import pytest

from capbench import Q_
from capbench import uncertainty as unc
from capbench.dispersion import LeadCorrection
from capbench.errors import CapbenchWarning, ExtractionError, FileFormatError, InputError
from capbench.files import read_measurement

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"


def _reading(f, c_x, d_x, L=0.0, R=0.0, c_o=0.0, g_o=0.0):
    """What the instrument reads (C_p, D) for a specimen C_x, D_x behind the leads."""
    w = 2 * math.pi * f
    y_x = w * c_x * (d_x + 1j)
    z_m = R + 1j * w * L + 1 / (y_x + g_o + 1j * w * c_o)
    y_m = 1 / z_m
    return y_m.imag / w, y_m.real / y_m.imag


@pytest.mark.parametrize("f", [1e5, 1e6, 1e7, 3e7])
def test_the_series_resonance_closed_form_is_removed(f):
    c, L = 20e-12, 250e-9
    w = 2 * math.pi * f
    apparent = c / (1 - w * w * L * c)  # the closed form
    assert _reading(f, c, 0.0, L=L)[0] == pytest.approx(apparent, rel=1e-12)  # 2nd method
    lc = LeadCorrection.from_values(inductance=f"{L * 1e9} nH")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        got, d = lc.correct(f, apparent)
    assert got == pytest.approx(c, rel=1e-12)
    assert d is None


def test_open_and_short_together_return_the_specimen():
    lc = LeadCorrection.from_values(
        inductance="180 nH",
        resistance="40 mohm",
        open_capacitance="0.8 pF",
        open_conductance="2 nS",
    )
    for f in (1e3, 1e5, 2e6):
        c_p, d = _reading(f, 33e-12, 0.012, L=180e-9, R=0.04, c_o=0.8e-12, g_o=2e-9)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", CapbenchWarning)
            c_x, d_x = lc.correct(f, Q_(c_p * 1e12, "pF"), d)
        assert c_x.units == Q_(1, "pF").units
        assert c_x.to("F").magnitude == pytest.approx(33e-12, rel=1e-11)
        assert d_x == pytest.approx(0.012, rel=1e-9)


def test_a_warning_where_the_apparent_capacitance_rises_toward_resonance():
    """w^2 L C = 1e-3 is where the leads add 0.1 % to the reading."""
    lc = LeadCorrection.from_values(inductance="100 nH")
    c = 50e-12
    f_limit = math.sqrt(1e-3 / (100e-9 * c)) / (2 * math.pi)  # about 1.6 MHz
    with warnings.catch_warnings():
        warnings.simplefilter("error", CapbenchWarning)
        lc.correct(0.9 * f_limit, c)
    with pytest.warns(CapbenchWarning, match=r"w\^2 L C = 0.0012.*series resonance"):
        lc.correct(1.1 * f_limit, c)


def test_a_reading_below_the_open_reading_is_refused():
    """Removing a series inductance always leaves a positive capacitance (C = C_app /
    (1 + w^2 L C_app)); what can leave none is an open capacitance above the reading."""
    lc = LeadCorrection.from_values(inductance="1 uH", open_capacitance="5 pF")
    with pytest.raises(ExtractionError, match=r"4 pF leaves no positive capacitance.*5 pF"):
        lc.correct(1e3, 4e-12)


def test_the_lead_inputs_reach_the_budget_with_the_closed_form_sensitivity():
    """dC/dL from C = C_app / (1 + w^2 L C_app): -w^2 C^2 (per H), here per nH."""
    lc = LeadCorrection.from_values(inductance="200 nH", u_inductance="20 nH")
    f = 5e6
    w = 2 * math.pi * f
    c_app = unc.type_b(Q_(20.0, "pF"), half_width=Q_(0.01, "pF"), name="C reading")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        c_x, _ = lc.correct(f, c_app)
    b = unc.budget(c_x.to("F").magnitude, "C")
    row = b.row("lead inductance (short reading)")
    c = c_x.to("F").magnitude.n
    assert row.sensitivity == pytest.approx(-(w**2) * c**2 * 1e-9, rel=1e-6)
    assert row.u == pytest.approx(20.0)


def test_values_are_range_checked():
    with pytest.raises(InputError, match="0 nH to 100 uH"):
        LeadCorrection.from_values(inductance="1 mH")
    with pytest.raises(InputError, match="0 ohm to 100 ohm"):
        LeadCorrection.from_values(resistance="-1 ohm")
    with pytest.raises(InputError, match="valid: "):
        LeadCorrection.from_values(capacitance="1 pF")


def _copy_demo(tmp_path: Path, leads: str) -> Path:
    shutil.copy(DEMO / "qf-pe-03_readings.csv", tmp_path)
    text = (DEMO / "qf-pe-03.toml").read_text() + "\n[leads]\n" + leads
    path = tmp_path / "m.toml"
    path.write_text(text)
    return path


def test_the_measurement_file_carries_the_leads(tmp_path):
    path = _copy_demo(
        tmp_path,
        'inductance = "300 nH"\ninductance_uncertainty = "30 nH"\nresistance = "50 mohm"\n',
    )
    m = read_measurement(path)
    assert m.leads.inductance == pytest.approx(300e-9)
    assert m.leads.u_inductance == pytest.approx(30e-9)
    assert m.leads.resistance == pytest.approx(0.05)
    plain = read_measurement(DEMO / "qf-pe-03.toml")
    assert plain.leads is None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        got = m.extract(fem=False)
    ref = plain.extract(fem=False)
    # at 1 MHz, 20.6 pF behind 300 nH reads w^2 L C = 2.4e-4 high: eps' drops by that
    w = 2 * math.pi * 1e6
    shift = w * w * 300e-9 * 20.6e-12
    top_got, top_ref = got.points[-1].eps_r.n, ref.points[-1].eps_r.n
    assert (top_ref - top_got) / top_ref == pytest.approx(shift, rel=0.01)
    names = [r.name for r in got.points[-1].budget.rows]
    assert "lead inductance (short reading)" in names


@pytest.mark.parametrize(
    ("leads", "expect"),
    [
        ('inductance = "2 mH"\n', "[leads] inductance"),
        ('inductance = "2 mH"\n', "0 nH to 100 uH"),
        ('inductance = "200"\n', "has no unit"),
        ('capacitance = "1 pF"\n', "is not a lead value; valid:"),
        ('resistance = "5 pF"\n', "is not a resistance"),
    ],
)
def test_bad_lead_values_are_refused_by_key(tmp_path, leads, expect):
    with pytest.raises(FileFormatError) as exc:
        read_measurement(_copy_demo(tmp_path, leads))
    assert expect in str(exc.value)
