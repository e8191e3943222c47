"""From eps*(f) to a material model: relaxation fits with correlated uncertainties, a
Kramers-Kronig check, and the correction of what the leads add.

The spectrum is eps*(w) = eps' - j eps'' at w = 2 pi f, as capbench's extraction gives it
(one :class:`~capbench.extract.Point` per frequency, every value an uncertain number of
the same inputs), or plain arrays with their uncertainties.

models
    the Havriliak-Negami function and its special cases (Debye, Cole-Cole,
    Cole-Davidson), a DC conductivity and an electrode-polarisation term
    (:func:`permittivity`, :data:`MODELS`, :func:`loss_peak_frequency`).
spectrum
    :class:`Spectrum`: frequencies, eps', eps'' and the covariance of all 2n values.
fitting
    :func:`fit` by generalised least squares over the full covariance; parameters as
    correlated ufloats; :func:`choose` ranks models by AIC or BIC; :func:`monte_carlo`
    cross-checks the parameters' uncertainties.
kk
    :func:`kramers_kronig` (Boukamp's linear test, residuals with their uncertainties)
    and :func:`kk_transform` (the integral with power-law continuation beyond the band).
leads
    :class:`LeadCorrection`: series inductance and resistance of the leads (from a short
    reading) and their stray admittance (from an open reading) removed from the
    readings before extraction, with their uncertainties in the budget.
analysis
    :func:`analyse`: the one workflow (fit, rank, check) behind the command line, the
    page and the report section; :class:`Relaxation` holds its result.
figures
    matplotlib Figures (no pyplot): the spectrum with the fitted model and its band,
    eps'' against eps', the residuals.

References
----------
P. Debye, Polar Molecules (1929). K. S. Cole and R. H. Cole, J. Chem. Phys. 9, 341
(1941). D. W. Davidson and R. H. Cole, J. Chem. Phys. 19, 1484 (1951). S. Havriliak and
S. Negami, Polymer 8, 161 (1967). B. A. Boukamp, J. Electrochem. Soc. 142, 1885 (1995).
H. Akaike, IEEE Trans. Autom. Control 19, 716 (1974); G. Schwarz, Ann. Stat. 6, 461
(1978).
"""

from .analysis import Relaxation, analyse
from .fitting import CRITERIA, Fit, MonteCarloCheck, choose, fit, monte_carlo
from .kk import KKCheck, kk_transform, kramers_kronig
from .leads import LeadCorrection
from .models import MODELS, PARAMETERS, loss_peak_frequency, parameter_names, permittivity
from .spectrum import Spectrum

__all__ = (
    "CRITERIA",
    "MODELS",
    "PARAMETERS",
    "Fit",
    "KKCheck",
    "LeadCorrection",
    "MonteCarloCheck",
    "Relaxation",
    "Spectrum",
    "analyse",
    "choose",
    "fit",
    "kk_transform",
    "kramers_kronig",
    "loss_peak_frequency",
    "monte_carlo",
    "parameter_names",
    "permittivity",
)
