"""The thermal and statistical part: closed-form thermal figures, stochastic ensembles, corners
and Monte Carlo."""
