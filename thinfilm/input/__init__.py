"""Scenario input: YAML schema and reader, units, continuum mapping, derived scales, errors."""
