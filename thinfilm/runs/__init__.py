"""Runs: the run folder (atomic writes, checkpoint, resume), one time-resolved run, sweeps."""
