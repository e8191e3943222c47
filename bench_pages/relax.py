"""Relaxation model: fit the extracted eps*(f) with capbench.dispersion (widgets only)."""

from __future__ import annotations

import pandas as pd
import streamlit as st

from bench_pages import state
from capbench import dispersion as dsp

st.title("Relaxation model")
st.caption(
    "Debye, Cole-Cole, Cole-Davidson and Havriliak-Negami models fitted to the extracted "
    "eps' and eps'' by generalised least squares over their full covariance (the points "
    "share the thickness and the electrode area, so their errors are correlated), ranked "
    "by an information criterion, with a Kramers-Kronig consistency check."
)
res = state.current_extraction()
if res is None:
    st.info(
        "Find eps' with loss readings (dissipation factor) at several frequencies on the "
        "Permittivity page first; the fit uses that result."
    )
    st.stop()
usable = [p for p in res.points if p.frequency is not None and p.eps_loss is not None]
if len(usable) < 3 or len(usable) != len(res.points):
    st.info(
        f"The result has {len(usable)} of {len(res.points)} points with a frequency and a "
        "loss reading; a relaxation fit needs a dissipation factor at every point and at "
        "least 3 frequencies."
    )
    st.stop()

TERMS = {"try with and without": None, "always": True, "never": False}
cols = st.columns(4)
models = cols[0].multiselect(
    "Models", list(dsp.MODELS), default=list(dsp.MODELS), key="relax.models"
)
criterion = cols[1].radio(
    "Ranked by", list(dsp.CRITERIA), key="relax.criterion", format_func=str.upper, horizontal=True
)
conductivity = cols[2].selectbox("DC conductivity term", list(TERMS), key="relax.sigma")
electrode = cols[3].selectbox(
    "Electrode-polarisation term", list(TERMS), index=2, key="relax.electrode"
)
draws = st.number_input(
    "Monte Carlo refits of the best model (0: none)",
    min_value=0,
    max_value=2000,
    value=0,
    step=100,
    key="relax.draws",
    help="Spectra drawn from the fitted model with the spectrum's covariance and refitted: "
    "their spread against the linearised uncertainties.",
)
if draws and draws < 20:
    state.inline_error(f"Monte Carlo refits = {draws}; valid: 0 (none) or 20 to 2000")
options = (tuple(models), criterion, conductivity, electrode, int(draws))
if not models:
    state.inline_error("Models: choose at least one model to fit")

if st.button(
    "Fit the models",
    type="primary",
    key="relax.run",
    disabled=not models or 0 < draws < 20,
):
    st.session_state[state.RELAXATION] = None
    with state.shielded("Relaxation model"), st.spinner("Fitting the relaxation models..."):
        rel = dsp.analyse(
            dsp.Spectrum.from_extraction(res),
            models,
            conductivity=TERMS[conductivity],
            electrode=TERMS[electrode],
            criterion=criterion,
            monte_carlo_draws=int(draws),
            seed=0,
        )
        st.session_state[state.RELAXATION] = (res, options, rel)

kept = st.session_state.get(state.RELAXATION)
if not kept:
    st.stop()
if kept[0] is not res:
    st.info("The permittivity result changed since the fit; press *Fit the models* again.")
    st.stop()
rel = kept[2]
if kept[1] != options:
    st.caption("The choices above changed since this fit; press *Fit the models* to refit.")

with state.shielded("Relaxation results"):
    st.markdown(state.as_text(rel.statement()))
    st.dataframe(
        pd.DataFrame(rel.parameter_rows(), columns=list(rel.PARAMETER_HEADER)),
        hide_index=True,
        width="stretch",
    )
    if rel.kk is None:
        st.info("Kramers-Kronig check: needs at least 5 frequencies.")
    elif rel.kk.consistent:
        st.success(state.as_text(rel.kk.text()), icon=":material/check_circle:")
    else:
        st.warning(state.as_text(rel.kk.text()), icon=":material/warning:")
    if rel.monte_carlo is not None:
        (st.success if rel.monte_carlo.agrees else st.warning)(
            state.as_text(rel.monte_carlo.text())
        )
    with st.expander("All models, ranked"):
        st.dataframe(
            pd.DataFrame(rel.table_rows(), columns=list(rel.TABLE_HEADER)),
            hide_index=True,
            width="stretch",
        )
    from capbench.dispersion.figures import FIGURES

    for _name, caption, func in FIGURES:
        st.pyplot(func(rel), clear_figure=False)
        st.caption(caption)
    st.caption(
        "The report page adds this model to the report while it belongs to the current "
        "permittivity result."
    )
