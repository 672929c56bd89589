"""Kill-and-resume campaign over every run kind: SIGKILL at random times, then the documented
resume, and compare the finished folder with an uninterrupted one byte for byte.

Run kinds: time-resolved LLG with and without the dipolar field, a Monte Carlo sweep on two
worker processes, a disorder ensemble, the heating plan (``--reuse`` after a kill) and the
quasi-static heating sequence. For each, an uninterrupted reference run and a run killed
``--kills`` times (SIGKILL of the process group of a subprocess this script started, at a
random time after the run took its folder lock) and resumed each time, then resumed to the end.
Checks per kind: every file equal byte for byte (manifests apart from wall time, process count,
versions, executor and compute times; the plan's folder name and "sweep ran/resumed"), no
temporary file and no lock file left. The same check with two kills per kind is the fast test
``tests/test_kill_resume.py``; ``-m slow`` runs eight.

Run: ``python validation/kill_resume_campaign.py [--kills 8] [--seed 0] [--kinds dynamics plan]``
prints, per kind, the kills that stopped a running process, the time taken and the verdict.
"""

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from test_kill_resume import KINDS, _campaign  # noqa: E402


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--kills", type=int, default=8)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--kinds", nargs="*", default=list(KINDS), choices=list(KINDS))
    args = ap.parse_args()
    import os

    os.environ["THINFILM_KILL_SEED"] = str(args.seed)
    import test_kill_resume

    test_kill_resume.SEED = args.seed
    print(f"{'kind':16s} {'kills':>5s} {'time s':>7s}  verdict")
    bad = 0
    for kind in args.kinds:
        t0 = time.time()
        with tempfile.TemporaryDirectory() as tmp:
            try:
                hits = _campaign(kind, Path(tmp), args.kills)
                verdict = "identical, no temporary file"
            except AssertionError as exc:
                hits, verdict = "?", f"DIFFERS: {exc}"
                bad += 1
        print(f"{kind:16s} {hits!s:>5s} {time.time() - t0:7.1f}  {verdict}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
