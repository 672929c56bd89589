"""Coarse film: the bridge from the atomistic lattice to nm cells.

* :mod:`.table` the temperature-dependent macroscopic parameters (Ms m_e(T), chi_par, chi_perp,
  K(T), A(T)) with errors, read and written as CSV with units, from a lab Ms(T) CSV too;
* :mod:`.measure` those parameters measured by Monte Carlo on the atomistic film;
* :mod:`.renorm` the cell-scale equilibrium magnetisation that the coarse film's own
  long-wavelength fluctuations bring back to the table's m_e(T).

The engine that uses them is :mod:`thinfilm.engines.llb`.
"""
