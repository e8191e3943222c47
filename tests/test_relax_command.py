"""`capbench relax` on the invented relaxation demo (QF-PU-11, made by
fixtures/quillfield/make_demo.py: field solves of the guarded cell with a specimen of a
Cole-Cole material with a DC conductivity, read through leads, plus scatter). The
FEM-corrected extraction, the lead correction and the fit together must return the
invented material within the stated uncertainties; the other tests use the closed form
for speed."""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import pytest

from capbench.cli import main
from capbench.errors import CapbenchWarning

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"
PU = str(DEMO / "qf-pu-11.toml")
#: the invented material of the demo (make_demo.PU_MODEL)
TRUTH = {"eps_inf": 3.42, "delta": 3.35, "tau": 2.2e-5, "alpha": 0.62, "sigma": 4e-11}


@pytest.fixture(scope="module")
def pu_json():
    import io

    out, err = io.StringIO(), io.StringIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        code = main(
            ["relax", PU, "--json", "--monte-carlo", "50", "--seed", "3"],
            stdout=out,
            stderr=err,
        )
    assert code == 0, err.getvalue()
    return json.loads(out.getvalue())


def test_the_demo_relaxation_is_found(pu_json):
    d = pu_json
    assert d["model"] == "cole-cole + conductivity"
    p = {k["parameter"]: k for k in d["parameters"]}
    assert set(p) == set(TRUTH)
    for k, v in TRUTH.items():
        assert abs(p[k]["value"] - v) <= 3 * p[k]["u"], (k, p[k])
    assert d["kramers_kronig"]["consistent"] is True
    assert d["monte_carlo"]["draws"] >= 45
    assert "inductance 250 nH" in d["leads"]
    assert d["caution"]


def test_text_output_and_plots(tmp_path, capsys):
    stem = tmp_path / "pu"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        code = main(["relax", PU, "--closed-form", "--model", "cole-cole", "--plot", str(stem)])
    assert code == 0
    text = capsys.readouterr().out
    assert "Relaxation model chosen by BIC: cole-cole + conductivity" in text
    assert "Kramers-Kronig check" in text and "leads: lead inductance 250 nH" in text
    for name in ("spectrum", "arc", "residuals"):
        png = tmp_path / f"pu-{name}.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_the_leads_warning_reaches_the_user(capsys):
    main(["relax", PU, "--closed-form", "--model", "debye", "--conductivity", "with"])
    err = capsys.readouterr().err
    assert "capbench: warning: qf-pu-11.toml, 3 MHz: w^2 L C = 0.0027" in err
    assert "series resonance near 57.5" in err  # 1 / (2 pi sqrt(250 nH x 30.6 pF))


@pytest.mark.parametrize(
    ("argv", "expect"),
    [
        (["--monte-carlo", "5"], "draws = 5; valid: a whole number from 20 to 100000"),
        (["--model", "lorentz"], "invalid choice: 'lorentz'"),
    ],
)
def test_bad_options_are_refused(argv, expect, capsys):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        code = main(["relax", PU, "--closed-form", *argv])
    assert code in (1, 2)
    assert expect in capsys.readouterr().err
