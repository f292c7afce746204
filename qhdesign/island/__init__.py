"""The interferometer island: the operating point (nonlinear, axisymmetric), the linear response
around it (K_I, K_L, K_IL) and the field dependence (:mod:`qhdesign.island.operating`,
:mod:`qhdesign.island.response`, :mod:`qhdesign.island.stage`).

Light at import: DOLFINx loads inside the solves.
"""
