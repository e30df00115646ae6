"""Direct-simulation Monte Carlo (DSMC) solver for 1-D and 2-D rarefied gas flows."""

__version__ = "0.1.0"
