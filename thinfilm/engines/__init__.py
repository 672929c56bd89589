"""Samplers: stochastic LLG (time-resolved) and Monte Carlo (equilibrium); numba kernels in
_kernels."""
