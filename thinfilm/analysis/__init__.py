"""Analysers on plain arrays plus sizes in nm: thermodynamics, domains, correlation, Tc."""

from thinfilm.analysis.correlation import (
    correlation_function,
    correlation_length,
    kmin_plan,
    kmin_power,
    ornstein_zernike_fit,
    second_moment_length,
    second_moment_series,
    structure_factor,
)
from thinfilm.analysis.critical import estimate_tc, tc_from_binder_crossing, tc_from_peaks
from thinfilm.analysis.domains import domain_statistics, label_domains
from thinfilm.analysis.patterns import bubble_statistics, stripe_orientation, stripe_period
from thinfilm.analysis.size_convergence import size_convergence
from thinfilm.analysis.thermo import blocking_error, integrated_autocorrelation_time, thermodynamics

__all__ = [
    "correlation_function",
    "correlation_length",
    "ornstein_zernike_fit",
    "second_moment_length",
    "second_moment_series",
    "kmin_plan",
    "kmin_power",
    "size_convergence",
    "structure_factor",
    "estimate_tc",
    "tc_from_binder_crossing",
    "tc_from_peaks",
    "domain_statistics",
    "label_domains",
    "bubble_statistics",
    "stripe_orientation",
    "stripe_period",
    "blocking_error",
    "integrated_autocorrelation_time",
    "thermodynamics",
]
