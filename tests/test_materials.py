"""capbench.materials against its sources.

* Water: C. G. Malmberg and A. A. Maryott, "Dielectric constant of water from 0 to 100 C",
  J. Res. NBS 56, 1 (1956): 80.10 at 20 degC and 78.30 at 25 degC (the table values
  from memory).
* Air: E. K. Smith and S. Weintraub, Proc. IRE 41, 1035 (1953): N = (77.6/T)(p + 4810
  e/T); dry air at 20 degC, 101.325 kPa: eps = 1.000536; humidity moves it by ~1e-4.
* Liquids: CRC Handbook of Chemistry and Physics, permittivity of liquids (from memory):
  cyclohexane 2.0243 at 20 degC, about -0.0016 per K.
* Sapphire: J. Krupka et al., Meas. Sci. Technol. 10, 387 (1999), 9.3899 and 11.586 near
  295 K (from memory).
"""

from __future__ import annotations

import math

import pytest
from uncertainties import covariance_matrix, ufloat

import capbench as cb
from capbench import materials as mat
from capbench import uncertainty as U


@pytest.mark.parametrize(("t", "eps"), [(20.0, 80.10), (25.0, 78.30)])
def test_water_malmberg_maryott(t, eps):
    # Malmberg and Maryott (1956), their table at 20 and 25 degC, to the published digits
    assert round(mat.water_eps_r(t), 2) == eps
    assert round(mat.reference_eps_r("water", f"{t} degC").n, 2) == eps


def test_water_formula_written_out():
    # the published polynomial, evaluated here independently at 0, 50 and 100 degC
    for t in (0.0, 50.0, 100.0):
        ref = 87.740 - 0.40008 * t + 9.398e-4 * t**2 - 1.410e-6 * t**3
        assert mat.water_eps_r(cb.Q_(t, "degC")) == pytest.approx(ref, rel=1e-15)
    with pytest.raises(cb.InputError, match="0 degC to 100 degC"):
        mat.water_eps_r(120)


def test_dry_air_smith_weintraub():
    # Smith and Weintraub (1953): dry air 20 degC, 101.325 kPa -> 1.000536; the refractivity
    # is computed here independently
    n = 77.6 / 293.15 * 1013.25
    assert mat.air_eps_r("20 degC", "101.325 kPa", 0.0) == pytest.approx((1 + n * 1e-6) ** 2)
    assert mat.air_eps_r() == pytest.approx(1.000536, abs=1e-6)  # quoted to 7 digits
    # humidity moves it by about 1e-4 (50 % at 20 degC); the wet term is 77.6 * 4810 e / T^2
    e = 0.5 * 6.112 * math.exp(17.62 * 20 / (243.12 + 20))
    wet = 77.6 * 4810 * e / 293.15**2 * 1e-6 * 2
    delta = mat.air_eps_r(relative_humidity=0.5) - mat.air_eps_r()
    assert delta == pytest.approx(wet, rel=1e-3)
    assert 0.5e-4 < delta < 2e-4
    with pytest.raises(cb.InputError, match="fraction"):
        mat.air_eps_r(relative_humidity=50)


def test_cyclohexane_temperature_coefficient():
    # CRC handbook (from memory): 2.0243 at 20 degC, -0.0016 per K
    assert mat.reference_eps_r("cyclohexane").n == pytest.approx(2.0243)
    assert mat.reference_eps_r("Cyclohexane ", "25 degC").n == pytest.approx(2.0243 - 5 * 0.0016)


def test_uncertain_temperature_correlates_two_fluids():
    # two fluids read at one thermometer: cov = c1 c2 u_T^2 (GUM 5.2.2), computed here
    temp = U.type_b("23 degC", u="0.2 K", name="cell thermometer")
    e_cyc = mat.reference_eps_r("cyclohexane", temp)
    e_air = mat.reference_eps_r("air", temp)
    cov = covariance_matrix([e_cyc, e_air])[0][1]
    t = 23.0
    d_air = (mat.air_eps_r(t + 1e-4) - mat.air_eps_r(t - 1e-4)) / 2e-4
    assert cov == pytest.approx(-0.0016 * d_air * 0.2**2, rel=1e-4)
    # the value's own uncertainty adds in quadrature
    assert e_cyc.s == pytest.approx(math.hypot(0.0005, 0.0016 * 0.2), rel=1e-9)


def test_solids_and_table():
    # Krupka et al. (1999), from memory
    assert mat.reference_eps_r("sapphire perpendicular").n == 9.3899
    assert mat.reference_eps_r("sapphire parallel").n == 11.586
    assert 3.78 <= mat.reference_eps_r("fused silica").n <= 3.83
    assert abs(mat.reference_eps_r("ptfe").n - 2.1) < 0.05
    text = mat.table()
    for m in mat.MATERIALS.values():
        assert m.name in text and m.source


def test_unknown_material_and_missing_coefficient():
    with pytest.raises(cb.InputError, match="valid"):
        mat.material("unobtainium")
    with pytest.raises(cb.InputError, match="no temperature coefficient"):
        mat.reference_eps_r("benzene", "25 degC")
    # close to the reference temperature the tabulated value stands
    assert mat.reference_eps_r("benzene", ufloat(20.2, 0.1)).n == 2.2825
