"""Time writing a 512 x 512, 500-frame H.264 movie from synthetic evolving spin frames."""

import argparse
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from thinfilm.render import write_movie

__all__ = ["synthetic_frames", "main"]


def synthetic_frames(n_frames, size, *, spacing_nm=1.0, dt_ps=0.5, seed=0):
    """Yield frame dicts of a drifting, coarsening stripe-and-bubble pattern (invented demo).

    Parameters
    ----------
    n_frames : int
        Number of frames.
    size : int
        Sites per side of the square lattice.
    spacing_nm : float
        Lattice spacing in nm.
    dt_ps : float
        Time between frames in ps.
    seed : int
        Seed of the random phases.
    """
    rng = np.random.default_rng(seed)
    u = np.arange(size) * (2 * np.pi / size)
    modes = rng.integers(1, 9, size=(6, 2))
    phases = rng.uniform(0, 2 * np.pi, 6)
    speeds = rng.uniform(-0.05, 0.05, 6)
    spins = np.empty((size, size, 3))
    for k in range(n_frames):
        # sum of plane waves cos(a x + b y + c), built from outer products (cheap source)
        h = np.zeros((size, size))
        for (a, b), p, v in zip(modes, phases, speeds, strict=True):
            c = p + v * k
            h += np.outer(np.cos(b * u + c), np.cos(a * u)) - np.outer(
                np.sin(b * u + c), np.sin(a * u)
            )
        mz = np.tanh(h * (0.5 + 0.01 * k))  # walls sharpen as the film "cools"
        phi = 1.5 * h + 0.05 * k
        r = np.sqrt(np.clip(1 - mz**2, 0, 1))
        spins[..., 0] = r * np.cos(phi)
        spins[..., 1] = r * np.sin(phi)
        spins[..., 2] = mz
        yield {
            "spins": spins,
            "time_ps": k * dt_ps,
            "temperature_K": 300.0 - 0.2 * k,
            "box_nm": np.array([size * spacing_nm, size * spacing_nm]),
        }


def main(argv=None):
    """Run the benchmark and print wall time, frame rate, peak memory and file size."""
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--frames", type=int, default=500)
    ap.add_argument("--size", type=int, default=512)
    ap.add_argument("--colour", default="mz", choices=("mz", "angle"))
    ap.add_argument("--out", type=Path, default=None, help="movie path (default: a temp folder)")
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        out = args.out or Path(tmp) / "bench.mp4"
        rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        t0 = time.perf_counter()
        info = write_movie(
            synthetic_frames(args.frames, args.size), out, fps=25, colour=args.colour
        )
        wall = time.perf_counter() - t0
        self_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux
        child_kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss  # largest child: ffmpeg
        size_mb = out.stat().st_size / 1e6
    t1 = time.perf_counter()
    for _ in synthetic_frames(args.frames, args.size):
        pass
    gen = time.perf_counter() - t1
    print(f"frames           : {info.n_frames} of {info.width} x {info.height} px ({args.colour})")
    print(f"wall time        : {wall:.2f} s ({info.n_frames / wall:.1f} frames/s)")
    print(f"  of which source: {gen:.2f} s generating the synthetic frames (timed separately)")
    print(f"peak RSS python  : {self_kb / 1024:.0f} MiB (before writing: {rss0 / 1024:.0f} MiB)")
    print(f"peak RSS ffmpeg  : {child_kb / 1024:.0f} MiB")
    print(
        f"one RGB frame    : {info.width * info.height * 3 / 2**20:.2f} MiB; all frames would be "
        f"{info.n_frames * info.width * info.height * 3 / 2**20:.0f} MiB"
    )
    print(f"file size        : {size_mb:.1f} MB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
