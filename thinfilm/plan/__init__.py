"""Heating plan: sweep curves, windows, fluctuation times, schedule and report."""

from thinfilm.plan.heating_plan import make_plan

__all__ = ["make_plan"]
