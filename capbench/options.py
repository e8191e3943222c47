"""Named choices of capbench's options, in a module that imports nothing, so the command
line can build its parser (``capbench --help``) without loading pint, scipy or
scikit-fem. validate checks values against these."""

#: how a solve's refined levels may be solved (see capbench.field.solve_unit_drives)
SOLVERS = ("auto", "direct", "multigrid")

#: the relaxation functions of capbench.dispersion (Havriliak-Negami and its special
#: cases), and how fits of them are ranked
RELAXATION_MODELS = ("debye", "cole-cole", "cole-davidson", "havriliak-negami")
RELAXATION_CRITERIA = ("bic", "aic")
