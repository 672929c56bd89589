"""Stripe width of a dipolar film under a heating ramp (stochastic LLG), one line per interval.

A measurement aid for the stripe demo: a film of point dipoles (0.5 nm cells of 40 muB, as in
scenarios/stripe_film.yaml) with J/g and K/g given in units of the dipolar constant
g = mu0 mu_s^2 / (4 pi a^3); a warm-up at --t0, then a linear ramp to --t1. Every --every ps it
prints the half-period L (sites) from the radial peak of S(k) of m_z and from its mean
wavenumber over 0 < |k| <= 2 k* (thinfilm.analysis.patterns.stripe_period: "peak / mean"), the
nematic order Q and <|m_z|>.

    python validation/stripe_heating.py --j 6.5 --k 8.3 --n 160 --warm 150 --ramp 600 --t1 30
    python validation/stripe_heating.py --j 6.5 --k 8.3 --n 192 --init stripes --t1 34

--init: random | up | stripes (straight, period nx / 4) | stripes:W (straight, width W) |
blocks:B (random up and down squares of B sites: domains wider than a quench gives) |
labyrinth:W (a demagnetised labyrinth of domains W sites wide, thinfilm.model.labyrinth).
It also prints Lw, the line-intercept domain width 4 N / (pi x wall crossings) of m_z smoothed
over 1.5 sites (stereology: the stripe-equivalent width of an isotropic pattern).
One kernel thread (THINFILM_THREADS is not read here: set_threads(1)).
"""

import argparse
import time

import numpy as np
from scipy import ndimage

from thinfilm.analysis.patterns import stripe_orientation, stripe_period
from thinfilm.config import set_threads
from thinfilm.engines.dipolar import dipolar_constant_T
from thinfilm.engines.relax import stripe_spins
from thinfilm.engines.stochastic_llg import LLGSimulation, initial_spins, stable_time_step
from thinfilm.input.errors import InputError
from thinfilm.input.scenario import load_scenario
from thinfilm.input.units import MEV_J, MU_B_J_PER_T
from thinfilm.model.labyrinth import labyrinth_spins
from thinfilm.model.parameters import build_model

A_NM = 0.5
MU = 40 * MU_B_J_PER_T
SHAPE = 6.775  # out-of-plane shape cost of the square lattice of point dipoles, g per site


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--j", type=float, default=6.5, help="J / g")
    ap.add_argument("--k", type=float, default=8.3, help="K / g")
    ap.add_argument("--n", type=int, default=160, help="n x n sites, periodic")
    ap.add_argument("--dt", type=float, default=30.0, help="time step (fs)")
    ap.add_argument("--alpha", type=float, default=0.5, help="damping")
    ap.add_argument("--warm", type=float, default=150.0, help="warm-up at --t0 (ps)")
    ap.add_argument("--ramp", type=float, default=600.0, help="ramp --t0 -> --t1 (ps)")
    ap.add_argument("--t0", type=float, default=0.0, help="start temperature (K)")
    ap.add_argument("--t1", type=float, default=30.0, help="end temperature (K)")
    ap.add_argument("--init", default="random")
    ap.add_argument("--seed", type=int, default=13)
    ap.add_argument("--save", default=None, help="write every line's m_z to this .npz")
    ap.add_argument("--every", type=float, default=30.0, help="ps between lines")
    a = ap.parse_args(argv)
    set_threads(1)
    g_mev = dipolar_constant_T(MU, A_NM) * MU / MEV_J
    raw = {"name": "stripe-heating",
           "lattice": {"shape": "square", "cells": [a.n, a.n], "spacing": f"{A_NM} nm",
                       "edges": "periodic"},
           "material": {"moment": "40 muB", "exchange": f"{a.j * g_mev:.6g} meV",
                        "anisotropy": {"constant": f"{a.k * g_mev:.6g} meV", "axis": [0, 0, 1]},
                        "dipolar": True},
           "temperature": f"{a.t0} K",
           "dynamics": {"method": "llg", "damping": a.alpha, "timestep": f"{a.dt} fs",
                        "duration": "10 ps"},
           "initial": "random", "seed": a.seed}
    model = build_model(load_scenario(raw))
    lat = model.lattice
    print(f"g = {g_mev:.4f} meV, J = {a.j * g_mev:.4g} meV, K_eff/g = {a.k - SHAPE:.3f}, "
          f"recommended step at {a.t1:g} K: {stable_time_step(model, a.t1, a.alpha) * 1e15:.3g} fs")
    if a.init.startswith("blocks:"):  # random +z / -z squares of B sites, a little noise
        b = int(a.init.split(":")[1])
        rng = np.random.default_rng(a.seed)
        signs = rng.choice([-1.0, 1.0], size=(-(-a.n // b),) * 2)
        s0 = rng.normal(scale=0.2, size=(a.n, a.n, 3))
        s0[..., 2] += np.kron(signs, np.ones((b, b)))[: a.n, : a.n]
        s0 /= np.linalg.norm(s0, axis=-1, keepdims=True)
    elif a.init.startswith("labyrinth:"):  # demagnetised labyrinth of domains W sites wide
        s0 = labyrinth_spins(lat, float(a.init.split(":")[1]) * A_NM, seed=a.seed)
    elif a.init.startswith("stripes:"):
        s0 = stripe_spins(lat, int(a.init.split(":")[1]), wall_width=1.5)
    else:
        s0 = initial_spins(lat, a.init, seed=a.seed)
    sim = LLGSimulation(model, temperature_K=a.t0, damping=a.alpha, time_step_s=a.dt * 1e-15,
                        seed=a.seed, spins=s0)
    geo = {"positions_nm": lat.positions_nm, "box_nm": lat.box_nm, "period": lat.period}
    t_start = time.time()

    frames = []

    def line(stage, t_ps, temp):
        f = sim.spins[..., 2]
        frames.append((temp, np.array(f, dtype=np.float32)))
        try:
            per = stripe_period(f, **geo)
            half, mean_half = (per[k] / A_NM / 2 for k in ("period_nm", "mean_period_nm"))
            q = stripe_orientation(f, **geo)["order"]
        except InputError:  # uniform
            half = mean_half = q = float("nan")
        sm = ndimage.gaussian_filter(f, 1.5, mode="wrap") > 0
        cuts = np.sum(sm != np.roll(sm, 1, 0)) + np.sum(sm != np.roll(sm, 1, 1))
        lw = f.size / max(cuts, 1) * 4 / np.pi
        print(f"{stage:5s} t = {t_ps:7.1f} ps  T = {temp:6.2f} K  "
              f"L = {half:6.2f} / {mean_half:6.2f} sites  "
              f"Lw = {lw:6.2f}  "
              f"Q = {q:.3f}  <|mz|> = {float(np.abs(f).mean()):.3f}  "
              f"[{time.time() - t_start:.0f} s]", flush=True)

    per = max(1, int(round(a.every * 1e3 / a.dt)))
    n_warm = int(round(a.warm * 1e3 / a.dt))
    done = 0
    while done < n_warm:
        n = min(per, n_warm - done)
        sim.advance(n, temperature_K=a.t0)
        done += n
        line("warm", done * a.dt * 1e-3, a.t0)
    n_ramp = max(1, int(round(a.ramp * 1e3 / a.dt)))
    rate = (a.t1 - a.t0) / n_ramp
    done = 0
    while done < n_ramp:
        n = min(per, n_ramp - done)
        sim.advance(n, temperature_K=a.t0 + rate * done, temperature_rate_K_per_step=rate)
        done += n
        line("ramp", done * a.dt * 1e-3, a.t0 + rate * done)
    print(f"{time.time() - t_start:.1f} s, {sim.step} steps")
    if a.save:
        np.savez_compressed(a.save, temperature_K=[t for t, _ in frames],
                            mz=np.stack([f for _, f in frames]))


if __name__ == "__main__":
    main()
