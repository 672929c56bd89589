"""What a scenario runs as (its mode), and which keys take effect in each mode.

A scenario runs as one of three modes, decided by what it asks for, never by how a value is
spelled (one temperature written as ``"30 K"`` or as ``["30 K"]`` means the same):

* ``run``: one time-resolved stochastic LLG run (``method: llg``, one temperature, no sizes);
* ``llg-set``: an equilibrium set sampled by stochastic LLG (``method: llg`` with several
  temperatures or with ``sizes``);
* ``mc-set``: an equilibrium set sampled by Monte Carlo (``method: monte-carlo``, any number of
  temperatures and sizes).

An equilibrium set writes one row per size and temperature to observables.csv (Tc only when
there are several temperatures). A key that cannot take effect in the chosen mode is an input
error: :data:`KEY_MODES` lists where each key acts, and :func:`check_keys_for_mode` enforces it.
"""

from thinfilm.input.errors import ScenarioError

__all__ = ["MODES", "MODE_TEXT", "KEY_MODES", "scenario_mode", "check_keys_for_mode",
           "CLUSTER_WITH_DMI", "metropolis_where_needed"]

MODES = ("run", "llg-set", "mc-set")
MODE_TEXT = {
    "run": "a time-resolved stochastic LLG run (dynamics.method: llg, one temperature, no sizes)",
    "llg-set": "an equilibrium set sampled by stochastic LLG (dynamics.method: llg with several "
               "temperatures or sizes)",
    "mc-set": "an equilibrium set sampled by Monte Carlo (dynamics.method: monte-carlo)",
}
ALL = MODES
SETS = ("llg-set", "mc-set")
LLG = ("run", "llg-set")

CLUSTER_WITH_DMI = ("cluster moves are not available with material.dmi: the embedded-cluster "
                    "reflection of both spins of a bond reverses the DMI energy, so the move is "
                    "not a symmetry of the film; set moves: [metropolis]")

# key path -> (modes where it takes effect, what it does there, how to fix a misplaced one).
# Keys not listed here act in every mode.
KEY_MODES = {
    "sizes": (SETS, "L x L lattices of the set, one row per size",
              "use lattice.cells for one lattice, or set dynamics.method: monte-carlo"),
    "temperature.refine": (SETS, "extra temperatures near Tc",
                           "give several temperatures, or remove refine"),
    "material.dipolar": (LLG, "dipole-dipole field of the moments (point or prism sites) in both "
                              "Heun stages",
                         "scenario Monte Carlo sets have no long-range field (the exact "
                         "sequential dipolar Monte Carlo of the API costs O(N^2) per sweep); "
                         "set dynamics.method: llg"),
    "dynamics.duration": (LLG, "length of the run (run) or sampled time per point (llg-set)",
                          "a Monte Carlo set is as long as dynamics.sweeps"),
    "dynamics.warmup": (LLG, "LLG time before recording or sampling",
                        "a Monte Carlo set warms up for dynamics.sweeps.warmup sweeps"),
    "dynamics.ramp": (("run",), "linear temperature / field ramp over the run",
                      "a ramp needs one temperature, no sizes and dynamics.method: llg"),
    "dynamics.sweeps": (("mc-set",), "Monte Carlo warm-up and sample sweeps per point",
                        "set dynamics.method: monte-carlo, or use dynamics.duration for LLG"),
    "dynamics.moves": (("mc-set",), "Monte Carlo move set: metropolis, and cluster (Wolff)",
                       "set dynamics.method: monte-carlo"),
    "dynamics.cluster_direction": (("mc-set",), "reflection direction of the cluster moves",
                                   "set dynamics.method: monte-carlo"),
    "dynamics.sample_every": (SETS, "steps (llg-set) or sweeps (mc-set) between samples",
                              "a time-resolved run records at record.every"),
    "disorder.realisations": (SETS,
                              "several disorder realisations, averaged, with the spread of Tc",
                              "a time-resolved run follows one realisation; remove it or make "
                              "the scenario a set"),
    "record": (("run",), "time-series and snapshot intervals of the run",
               "an equilibrium set keeps sweep.snapshots snapshots per point"),
    "sweep": (SETS, "order, cluster and snapshots of the set's points",
              "a time-resolved run has one point; remove the section"),
    "analysis": (SETS, "threshold and smoothing of the domain analysis of each point",
                 "a time-resolved run is analysed with 'thinfilm movie' and 'thinfilm plot'"),
    "instrument": (SETS, "instrument-limited lengths and the plan; in a run only with "
                         "movie.instrument: true",
                   "set movie.instrument: true to show the instrument view in the movie"),
}
# damping, timestep and gyromagnetic_ratio act in every mode: in an mc-set they set the stochastic
# LLG runs of the heating plan's fluctuation times (thinfilm plan) and of the demo's movie.


def scenario_mode(method, n_temperatures, has_sizes):
    """Mode of a scenario from its method, number of temperatures and whether it has sizes."""
    if method == "monte-carlo":
        return "mc-set"
    if n_temperatures > 1 or has_sizes:
        return "llg-set"
    return "run"


def _present(data, dotted):
    """True when the key is given with a value that asks for something (not null, false, none)."""
    node = data
    for part in dotted.split("."):
        if not isinstance(node, dict) or node.get(part) is None:
            return False
        node = node[part]
    if dotted == "disorder.realisations" and node == 1:
        return False  # one realisation is what every run has
    return node is not False and node != "none"


def check_keys_for_mode(data, mode, path, *, n_temperatures):
    """Raise ScenarioError for the first key of ``data`` that cannot take effect in ``mode``."""
    for key, (modes, what, fix) in KEY_MODES.items():
        if not _present(data, key) or mode in modes:
            continue
        if key == "instrument" and mode == "run" and _present(data, "movie.instrument") \
                and data["movie"]["instrument"] is True:
            continue
        raise ScenarioError(
            f"cannot take effect in this scenario, which runs as {MODE_TEXT[mode]}; it acts only "
            f"in {', '.join(modes)} ({what}). Remove it or change the mode: {fix}.",
            path=path, key=key)
    if mode in SETS and _present(data, "temperature.refine") and n_temperatures < 2:
        raise ScenarioError("refine: near-tc needs several temperatures to find Tc between; "
                            "give a wider {start, stop, step} range or remove refine",
                            path=path, key="temperature.refine")


def metropolis_where_needed(r, path, mat, disorder, dyn):
    """The dynamics with Metropolis moves only where cluster moves are not exact (a disordered
    film, a film with DMI); cluster moves asked for explicitly with DMI are refused here (the
    disorder section refuses its own)."""
    from dataclasses import replace

    if (disorder is not None or mat.dmi_J) and "cluster" in dyn.moves:
        if mat.dmi_J and "moves" in (r.raw("dynamics") or {}):
            raise ScenarioError(CLUSTER_WITH_DMI, path=path, key="dynamics.moves")
        dyn = replace(dyn, moves=("metropolis",))  # default moves: Metropolis only here
    return dyn
