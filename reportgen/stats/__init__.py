"""The statistics stage of reportgen: unit-root and stationarity tests, the order of integration,
cointegration and the regression assessment.

Every function here takes plain pandas/numpy data and returns the frozen values of
:mod:`reportgen.stats.types`; nothing in this package knows how its results will be rendered, so it
can be used on its own from a notebook.
"""
