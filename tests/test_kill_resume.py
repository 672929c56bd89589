"""SIGKILL at random times, then the documented resume: the finished folder is byte for byte
the folder of an uninterrupted run, with no temporary or lock file left (every run kind).

Each test kills only the process group of a subprocess it started. The kill times are drawn
from a seeded generator (THINFILM_KILL_SEED, default 0); the slow variant kills more often.
"""

import json
import os
import re
import sys
import textwrap
import time

import numpy as np
import pytest
from run_folder_helpers import (
    DIPOLAR,
    DYNAMICS,
    ENSEMBLE,
    LOCK_NAME,
    SEQUENCE_OPTIONS,
    SWEEP,
    assert_same_folder,
    cli,
    kill_at_random_times,
    start,
    wait_for,
    write_yaml,
)

SEED = int(os.environ.get("THINFILM_KILL_SEED", "0"))

SEQUENCE_SCRIPT = textwrap.dedent("""
    import sys
    from thinfilm.config import set_threads
    from thinfilm.input.scenario import load_scenario
    from thinfilm.runs.heating_sequence import run_heating_sequence
    set_threads(1)
    run_heating_sequence(load_scenario(sys.argv[1]), sys.argv[2], resume=sys.argv[3] == "1",
                         progress=False, **{options})
""").format(options=dict(SEQUENCE_OPTIONS, between=400, frames=4))


def _with(data, **changes):
    d = json.loads(json.dumps(data))
    for path, value in changes.items():
        node = d
        keys = path.split("__")
        for k in keys[:-1]:
            node = node[k]
        node[keys[-1]] = value
    return d


# (scenario, extra CLI arguments, seconds over which kills are spread)
KINDS = {
    "dynamics": (_with(DYNAMICS, dynamics__duration="30 ps", record__snapshots="1 ps"), (), 2.0),
    "dipolar": (_with(DIPOLAR, dynamics__duration="6 ps", record__snapshots="0.5 ps"), (), 2.0),
    "sweep-2-workers": (_with(SWEEP, dynamics__sweeps={"warmup": 100, "samples": 1500}),
                        ("--workers", "2"), 6.0),
    "ensemble": (_with(ENSEMBLE, dynamics__sweeps={"warmup": 100, "samples": 1000}),
                 ("--workers", "1"), 2.5),
    "plan": (_with(SWEEP, temperature=["1.5 K", "2 K", "2.5 K", "3 K", "3.5 K"],
                   dynamics__sweeps={"warmup": 100, "samples": 800}),
             ("--resolution", "1 nm", "--exposure", "1 ms", "--llg-duration", "5 ps",
              "--workers", "1"), 3.0),
    "sequence": (SWEEP, (), 2.0),
}


def _commands(kind, path, out, extra, tmp_path):
    if kind == "sequence":
        script = tmp_path / "sequence.py"
        script.write_text(SEQUENCE_SCRIPT)
        base = [sys.executable, str(script), str(path), str(out)]
        return base + ["0"], base + ["1"]
    if kind == "plan":
        base = cli("plan", path, "-o", out, "-q", *extra)
        return base, base + ["--reuse"]
    base = cli("run", path, "-o", out, "-q", *extra)
    return base, base + ["--resume"]


def _campaign(kind, tmp_path, kills):
    data, extra, span = KINDS[kind]
    path = write_yaml(tmp_path / f"{kind}.yaml", data)
    ref, out = tmp_path / "ref", tmp_path / "cut"
    first, _ = _commands(kind, path, ref, extra, tmp_path)
    # the uninterrupted reference runs first and times the run from its lock to its end, so
    # the kills fall inside the run however fast this machine is (a span fixed in seconds
    # missed every run on a fast machine)
    reference = start(first)
    wait_for(ref / LOCK_NAME, reference)
    t0 = time.monotonic()
    assert reference.wait(timeout=600) == 0
    span = min(span, 0.6 * (time.monotonic() - t0))
    first, resume = _commands(kind, path, out, extra, tmp_path)
    rng = np.random.default_rng([SEED, len(kind), kills])
    hits = kill_at_random_times(first, resume, out, rng, kills, span)
    assert hits >= 1  # at least one kill stopped a running process
    if kind == "plan":  # the plan names its folder and says how its sweep was obtained
        assert_same_folder(ref, out, ignore_keys=("sweep",), normalise=_provenance)
    else:
        assert_same_folder(ref, out)
    return hits


def _provenance(text, folder):
    text = text.replace(str(folder), "<folder>")
    return re.sub(r"sweep (ran|resumed|reused) in this folder", "sweep <how> in this folder",
                  text)


@pytest.mark.parametrize("kind", list(KINDS))
def test_killed_and_resumed_equals_uninterrupted(tmp_path, kind):
    _campaign(kind, tmp_path, kills=2)


@pytest.mark.slow
@pytest.mark.parametrize("kind", list(KINDS))
def test_killed_and_resumed_many_times_equals_uninterrupted(tmp_path, kind):
    _campaign(kind, tmp_path, kills=8)
