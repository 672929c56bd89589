"""Which tests catch a deliberate few-per-cent bias in the key estimators and kernels?

Each mutation edits one line of a temporary copy of the project (package, tests, validation
scripts; the working tree is never touched), runs a targeted selection of tests on that copy
(fast and slow tests alike), and records which tests fail. A baseline run of the same
selections on the unmodified copy comes first, so a test that fails without any mutation is
reported as such and never counted as a catch. Mutations (all +2 %, the size the headline
checks must resolve):

* ``xi-second-moment``: the second-moment correlation length (``correlation_length_nm``);
* ``xi-sk``: the S(k) Ornstein-Zernike length (``correlation_length_sk_nm``);
* ``xi-fit``: the C(r) Ornstein-Zernike fit length (``correlation_length_fit_nm``);
* ``mc-temperature``: the temperature the Monte Carlo engine samples at (its beta);
* ``noise-variance``: the variance of the stochastic LLG thermal field;
* ``tc-estimate``: the Binder-crossing Tc estimate (``tc.json``).

A mutation whose pattern is no longer found (the code changed) is reported, not skipped
silently. Output: one table row per mutation, the tests that caught it, the ones that did not.

    python validation/mutation_check.py [--only NAME ...] [--no-baseline] [--keep DIR]

CPU-heavy (the slow tests of each selection run too): about 15 minutes of CPU.
"""

import argparse
import re
import shutil
import subprocess
import sys
import tempfile
import time
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
COPY = ("thinfilm", "tests", "validation", "scenarios", "pyproject.toml")


@dataclass(frozen=True)
class Mutation:
    name: str
    what: str
    path: str
    pattern: str  # regular expression that must match exactly once
    replacement: str
    tests: tuple


MUTATIONS = (
    Mutation("xi-second-moment", "second-moment xi x 1.02", "thinfilm/analysis/correlation.py",
             r"return float\(np\.mean\(xis\)\)", "return 1.02 * float(np.mean(xis))",
             ("tests/analysis/test_correlation.py",
              "tests/validation/test_xi_estimators_exact.py")),
    Mutation("xi-sk", "S(k) OZ xi x 1.02", "thinfilm/analysis/structure.py",
             r'return \{"xi_nm": xi,', 'return {"xi_nm": 1.02 * xi,',
             ("tests/analysis/test_structure.py",
              "tests/validation/test_xi_estimators_exact.py")),
    Mutation("xi-fit", "C(r) OZ fit xi x 1.02", "thinfilm/analysis/correlation.py",
             r'"fit_nm": fit_all\[0\],', '"fit_nm": 1.02 * fit_all[0],',
             ("tests/analysis/test_correlation.py",
              "tests/validation/test_xi_estimators_exact.py")),
    Mutation("mc-temperature", "Monte Carlo beta at 1.02 T", "thinfilm/engines/montecarlo.py",
             r"\(KB_J_PER_K \* self\._temperature_K\)",
             "(KB_J_PER_K * 1.02 * self._temperature_K)",
             ("tests/validation/test_ising_limit.py::test_binder_crossing_gives_the_exact_ising_tc",
              "tests/test_cluster.py::test_cluster_binder_cumulant_at_the_onsager_temperature",
              "tests/validation/test_plan_exact_tc.py",
              "tests/test_sweep.py::test_monte_carlo_and_stochastic_llg_agree")),
    Mutation("noise-variance", "LLG thermal-field variance x 1.02",
             "thinfilm/engines/stochastic_llg.py",
             r"math\.sqrt\(2 \* self\.damping", "math.sqrt(1.02 * 2 * self.damping",
             ("tests/validation/test_llg_physics.py",
              "tests/test_sweep.py::test_monte_carlo_and_stochastic_llg_agree",
              "tests/test_sweep.py::test_monte_carlo_and_stochastic_llg_agree_tightly[9.3]")),
    Mutation("tc-estimate", "Binder-crossing Tc x 1.02", "thinfilm/analysis/critical.py",
             r'return \{"tc_K": float\(w @ tcs\),', 'return {"tc_K": 1.02 * float(w @ tcs),',
             ("tests/analysis/test_critical.py",
              "tests/validation/test_ising_limit.py::test_binder_crossing_gives_the_exact_ising_tc",
              "tests/validation/test_plan_exact_tc.py")),
)


def _copy_tree(dest):
    for name in COPY:
        src = ROOT / name
        if src.is_dir():
            shutil.copytree(src, dest / name, copy_function=shutil.copy2,
                            ignore=shutil.ignore_patterns(".pytest_cache"))
        else:
            shutil.copy2(src, dest / name)


def _run_tests(work, tests, tag):
    """{test id: 'passed' | 'failed' | 'skipped'} of one pytest run in the copy."""
    xml = work / f"report-{tag}.xml"
    cmd = [sys.executable, "-m", "pytest", "-m", "slow or not slow", "-q", "-p",
           "no:cacheprovider", f"--junitxml={xml}", *tests]
    env = {**__import__("os").environ, "MPLBACKEND": "Agg", "PYTHONPATH": str(work)}
    subprocess.run(cmd, cwd=work, env=env, stdout=subprocess.DEVNULL,
                   stderr=subprocess.DEVNULL, check=False)
    out = {}
    if not xml.is_file():
        return out
    for case in ET.parse(xml).getroot().iter("testcase"):
        name = f"{case.get('classname')}::{case.get('name')}"
        if case.find("failure") is not None or case.find("error") is not None:
            out[name] = "failed"
        elif case.find("skipped") is not None:
            out[name] = "skipped"
        else:
            out[name] = "passed"
    return out


def _short(name):
    return name.replace("tests.", "").replace("validation.", "validation/")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--only", nargs="+", help="run only these mutations")
    ap.add_argument("--no-baseline", action="store_true",
                    help="skip the unmutated run (then every failure counts as a catch)")
    ap.add_argument("--keep", help="work in this folder and keep it")
    a = ap.parse_args(argv)
    muts = [m for m in MUTATIONS if not a.only or m.name in a.only]
    work = Path(a.keep) if a.keep else Path(tempfile.mkdtemp(prefix="thinfilm-mutation-"))
    if work.exists() and any(work.iterdir()):
        sys.exit(f"mutation_check: --keep folder {work} is not empty; give a new folder")
    work.mkdir(parents=True, exist_ok=True)
    _copy_tree(work)
    t0 = time.time()
    baseline = {}
    if not a.no_baseline:
        tests = sorted({t for m in muts for t in m.tests})
        baseline = _run_tests(work, tests, "baseline")
        bad = [n for n, s in baseline.items() if s == "failed"]
        print(f"baseline: {len(baseline)} tests, {len(bad)} failing without a mutation"
              + (": " + ", ".join(_short(n) for n in bad) if bad else ""), flush=True)
    rows = []
    for m in muts:
        target = work / m.path
        original = (ROOT / m.path).read_text()
        text, n = re.subn(m.pattern, m.replacement, original)
        if n != 1:
            rows.append((m, None, f"pattern found {n} times (code changed?)"))
            print(f"{m.name}: pattern found {n} times in {m.path}; not run", flush=True)
            continue
        target.write_text(text)
        try:
            t1 = time.time()
            res = _run_tests(work, list(m.tests), m.name)
        finally:
            shutil.copy2(ROOT / m.path, target)  # restore
        caught = [k for k, s in res.items() if s == "failed" and baseline.get(k) != "failed"]
        missed = [k for k, s in res.items() if s == "passed"]
        rows.append((m, (caught, missed), f"{time.time() - t1:.0f} s"))
        print(f"{m.name}: {len(caught)} caught, {len(missed)} passed ({time.time() - t1:.0f} s)",
              flush=True)
    print("\n| mutation | change | caught by | not caught by | time |\n|---|---|---|---|---|")
    for m, res, note in rows:
        if res is None:
            print(f"| {m.name} | {m.what} | not run: {note} | | |")
            continue
        caught, missed = res
        print(f"| {m.name} | {m.what} | {', '.join(_short(c) for c in caught) or 'NONE'} | "
              f"{', '.join(_short(c) for c in missed) or '-'} | {note} |")
    print(f"\ntotal {time.time() - t0:.0f} s; work folder {work}"
          + ("" if a.keep else " (removed)"))
    if not a.keep:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
