"""Command line: parses arguments, calls the API, prints. No physics here."""

import argparse
import sys
import time
import warnings
from pathlib import Path

from thinfilm._version import __version__
from thinfilm.input.errors import (
    InputError,
    ThinFilmError,
    ThinFilmWarning,
    command_line_spelling,
)

__all__ = ["main"]


def _print_check(sc):
    from thinfilm.engines.stochastic_llg import stable_time_step
    from thinfilm.input.derived import (
        dipolar_shape_cost_J,
        dmi_scales,
        exchange_length_nm,
        mean_field_tc_K,
        wall_parameter_nm,
    )
    from thinfilm.input.units import KB_J_PER_K, MEV_J
    from thinfilm.model.parameters import build_model

    model = build_model(sc)
    d = sc.describe()
    lat, mat = d["lattice"], d["material"]
    print(f"scenario {sc.name!r} ({sc.source}) is valid.")
    print(f"  lattice     {lat['shape']} {lat['cells'][0]} x {lat['cells'][1]} sites, spacing "
          f"{lat['spacing_nm']:g} nm, {lat['edges']} edges, {model.lattice.n_sites} sites, "
          f"{model.lattice.box_nm[0]:.4g} x {model.lattice.box_nm[1]:.4g} nm")
    print(f"  moment      {mat['moment_muB']:.4g} muB per site")
    if mat.get("calibration"):  # exchange set from a measured Tc (thinfilm/cli_lab.py)
        from thinfilm.cli_lab import print_calibration

        print_calibration(mat["calibration"], prefix="  exchange    ")
    else:
        print(f"  exchange    J = {mat['exchange_meV']:.4g} meV per bond "
              f"(E = -J Si.Sj, each bond once)")
    kind = ("easy axis" if model.anisotropy_J > 0 else "easy plane" if model.anisotropy_J < 0
            else "none")
    print(f"  anisotropy  K = {mat['anisotropy_meV']:.4g} meV per site along {mat['axis']} "
          f"({kind})")
    if model.dmi_J:
        print(f"  DMI         d = {model.dmi_meV:.4g} meV per bond (E = sum D_ij.(Si x Sj), "
              "D_ij = d z x r_ij, interfacial)")
    if mat.get("dipolar"):
        site = mat.get("dipolar_site")
        print("  dipolar     " + ("point dipoles at the sites" if site is None else
                                  "prism sites {:g} x {:g} x {:g} nm (demagnetising tensor)"
                                  .format(*site["size_nm"])))
    if "continuum" in mat:
        c = mat["continuum"]
        print(f"  (from A = {c['stiffness_J_per_m']:.4g} J/m, "
              f"Ku = {c['anisotropy_density_J_per_m3']:.4g} J/m^3, "
              f"Ms = {c['magnetisation_A_per_m']:.4g} A/m, t = {c['thickness_nm']:.4g} nm)")
        lex = exchange_length_nm(c['stiffness_J_per_m'], c['magnetisation_A_per_m'])
        print(f"  exchange length  {lex:.3g} nm")
    print(f"  field       {d['field_T']} T")
    if sc.sweep:
        t = sc.sweep.temperatures_K
        print(f"  sweep       {len(t)} temperatures {t[0]:g} .. {t[-1]:g} K, "
              f"sizes {sc.sweep.sizes or [lat['cells'][0]]}, "
              f"order {sc.sweep.order}, method {sc.dynamics.method}")
    else:
        given = sc.raw.get("temperature") if isinstance(sc.raw, dict) else None
        as_written = (f", given as {given!r}" if isinstance(given, str)
                      and given.strip() != f"{sc.temperature_K:g} K" else "")
        print(f"  temperature {sc.temperature_K:g} K  (kB T = "
              f"{KB_J_PER_K * sc.temperature_K / MEV_J:.4g} meV{as_written})")
    print("  initial     " + (f"labyrinth of up and down domains {sc.initial_width_nm:g} nm wide"
                              if sc.initial == "labyrinth" else sc.initial))
    tc = mean_field_tc_K(model)
    print("derived scales")
    print(f"  mean-field Tc estimate   {tc:.4g} K (mean field overestimates Tc in 2D; with K = 0 "
          f"there is no finite-T order in 2D)")
    shape = dipolar_shape_cost_J(model)
    if shape:
        k_eff = (model.anisotropy_J - shape) / MEV_J
        print(f"  dipolar shape anisotropy {shape / MEV_J:.4g} meV per site (infinite film): "
              f"K_eff = K - {shape / MEV_J:.4g} = {k_eff:.4g} meV, "
              f"{'perpendicular' if k_eff > 0 else 'in-plane'} uniform state")
    w = wall_parameter_nm(model)
    if w is not None:
        name = "sqrt(A/K_eff)" if shape else "sqrt(A/K)"
        print(f"  wall parameter {name} {w:.4g} nm, wall width pi {name} = {3.14159265 * w:.4g} nm")
    ds = dmi_scales(model)
    if ds is not None:
        t_m = (mat.get("continuum") or {}).get("thickness_nm")
        dens = None if t_m is None else ds["dmi_J_per_m2_times_t"] / (t_m * 1e-9) * 1e3
        per = "" if dens is None else f" = {dens:.4g} mJ/m^2"
        print(f"  DMI density D t = {ds['dmi_J_per_m2_times_t']:.4g} J/m{per}; spin-spiral period "
              f"4 pi A/|D| = {ds['spiral_period_nm']:.4g} nm (T = 0, no anisotropy)")
        if ds["critical_ratio"] is None:
            print("  |D| / D_c   not defined (K_eff <= 0: no perpendicular uniform state)")
        else:
            state = ("uniform state unstable: spirals/stripes" if ds["critical_ratio"] > 1
                     else f"uniform state stable; Neel walls of one sense, energy sigma t = "
                          f"{ds['wall_energy_J_per_m2_times_t']:.4g} J/m")
            print(f"  |D| / D_c = {ds['critical_ratio']:.3g} (D_c = 4 sqrt(A K_eff) / pi): {state}")
    dy = sc.dynamics
    tmax = (max(sc.sweep.temperatures_K) if sc.sweep
            else max(sc.temperature_K, dy.ramp_temperature_K or 0))
    dt_ok = stable_time_step(model, tmax, dy.damping, dy.gamma)
    flag = "ok" if dy.time_step_s <= dt_ok else "TOO LARGE"
    print(f"  largest recommended time step {dt_ok * 1e15:.3g} fs at {tmax:g} K "
          f"(scenario uses {dy.time_step_s * 1e15:g} fs: {flag})")


def _cmd_check(args):
    from thinfilm.input.coarse_spec import is_coarse
    from thinfilm.input.scenario import load_scenario

    if is_coarse(args.file):
        from thinfilm.render.coarse_check import print_coarse_check

        print_coarse_check(args.file)
        return 0
    _print_check(load_scenario(args.file))
    return 0


def _cmd_run(args):
    from thinfilm.api import run

    out = run(args.file, args.output, resume=args.resume, overwrite=args.overwrite,
              workers=args.workers, cluster=args.cluster, progress=not args.quiet)
    print(f"run folder: {out}")
    return 0


def _cmd_demo(args):
    from thinfilm.demo_pipeline import demo

    out = demo(args.output, film=args.film, workers=args.workers, progress=not args.quiet,
               n_threads=args.threads)
    print(f"demo run folder: {out}")
    return 0


def _cmd_image(args):
    from thinfilm.render.image_plot import analyse_image_with_figure

    res = analyse_image_with_figure(args.file, pixel_size=args.pixel_size, out_dir=args.output,
                                    level=args.level, smoothing=args.smoothing,
                                    background=args.background,
                                    mask=args.mask, highpass_length=args.highpass_length,
                                    threshold=args.threshold, resolution=args.resolution)
    print(f"image {args.file}: pixel {res['pixel_size_nm']:g} nm, threshold "
          f"{'Otsu' if res['threshold_method'] == 'otsu' else 'median'} + level {res['level']:g}, "
          f"up area fraction {res['up_area_fraction']:.3g}")
    print(f"  correlation length  {res['correlation_length_nm']:.4g} "
          f"+- {res['correlation_length_nm_err']:.2g} nm "
          f"(second moment); {res['correlation_length_fit_nm']:.4g} nm (Ornstein-Zernike fit)")
    print(f"  domains             {res['domain_count']}, "
          f"mean area {res['mean_domain_area_nm2']:.4g} nm^2")
    print(f"  written to {Path(args.output) / 'image_analysis.json'} and image_analysis.png")
    return 0


def _cmd_movie(args):
    from thinfilm.render.movie import write_movie

    instrument = None
    if args.fwhm:
        from thinfilm.input.units import parse_quantity

        try:
            fwhm = parse_quantity(args.fwhm, "length") * 1e9
            pix = parse_quantity(args.pixel, "length") * 1e9 if args.pixel else fwhm / 3
        except ValueError as exc:
            raise InputError(f"--fwhm/--pixel: {exc}") from None
        instrument = {"fwhm_nm": fwhm, "pixel_nm": pix, "noise": args.noise}
    out = args.output or str(Path(args.run_dir) / ("movie.gif" if args.gif else "movie.mp4"))
    run_dir = Path(args.run_dir)
    inside = (run_dir / "manifest.json").is_file() and \
        Path(out).resolve().is_relative_to(run_dir.resolve())
    if inside:  # a movie written into a run folder: not while a run writes it, and listed
        from thinfilm.runs.folder import refresh_file_list
        from thinfilm.runs.lifecycle import hold

        with hold(run_dir):
            info = write_movie(args.run_dir, out, fps=args.fps, colour=args.colour,
                               instrument=instrument, gif=args.gif)
            refresh_file_list(run_dir)
    else:
        info = write_movie(args.run_dir, out, fps=args.fps, colour=args.colour,
                           instrument=instrument, gif=args.gif)
    print(f"movie: {info.path} ({info.n_frames} frames, {info.width} x {info.height} px, "
          f"{info.fps} fps)")
    return 0


def _cmd_plot(args):
    from thinfilm.api import plot_run

    for p in plot_run(args.run_dir):
        print(p)
    return 0


def _cmd_plan(args):
    from thinfilm.api import plan

    res = plan(args.file, args.output, resolution=args.resolution, exposure=args.exposure,
                    field_of_view=args.field_of_view, workers=args.workers, reuse=args.reuse,
                    overwrite=args.overwrite,
                    progress=not args.quiet, n_points=args.points, dwell=args.dwell,
                    llg_duration=args.llg_duration, instrument=args.instrument)
    print(res["summary_text"])
    print(f"plan written to {res['plan_md']}")
    return 0


def build_parser():
    p = argparse.ArgumentParser(prog="thinfilm", description=(
        "Thermal fluctuations of magnetic order in 2D films: stochastic LLG and Monte Carlo, "
        "domains, correlation length, movies and heating plans."))
    p.add_argument("--version", action="version", version=f"thinfilm {__version__}")
    p.add_argument("--threads", type=int, default=None, help="kernel threads (default: all cores)")
    sub = p.add_subparsers(dest="command", required=True)

    s = sub.add_parser("demo",
                       help="run the embedded demo scenario (an invented film) into outputs/")
    s.add_argument("-o", "--output", default=None, help="run folder (default outputs/demo-<time>)")
    s.add_argument("--film", choices=["monolayer", "stripes", "grains"], default="monolayer",
                   help="monolayer: sweep through Tc, heating movie, plan (default); stripes: "
                        "domains of a dipolar film heated until they narrow and break up, "
                        "with a movie; "
                        "grains: a polycrystalline film over two disorder realisations")
    s.add_argument("--workers", type=int, default=None, help="local worker processes for the sweep")
    s.add_argument("-q", "--quiet", action="store_true", help="no progress bars")
    s.set_defaults(func=_cmd_demo)

    s = sub.add_parser("check", help="validate a scenario and print resolved parameters "
                                     "and derived scales")
    s.add_argument("file")
    s.set_defaults(func=_cmd_check)

    s = sub.add_parser("run", help="run a scenario (one dynamics run, or a temperature sweep)")
    s.add_argument("file")
    s.add_argument("-o", "--output", required=True, help="run folder")
    s.add_argument("--resume", action="store_true",
                   help="continue an interrupted run in the same folder (same scenario)")
    s.add_argument("--overwrite", action="store_true",
                   help="delete the earlier run in the folder, then run afresh")
    s.add_argument("--workers", type=int, default=None, help="local worker processes for a sweep")
    s.add_argument("--cluster", default=None, help="Dask scheduler address, e.g. tcp://host:8786")
    s.add_argument("-q", "--quiet", action="store_true", help="no progress bars")
    s.set_defaults(func=_cmd_run)

    s = sub.add_parser("image",
                       help="domain and correlation analysis of a measured microscope image")
    s.add_argument("file", help="PNG or TIFF, greyscale")
    s.add_argument("--pixel-size", required=True, help='pixel size with unit, e.g. "5 nm"')
    s.add_argument("-o", "--output", required=True, help="output folder")
    s.add_argument("--level", type=float, default=0.0,
                   help="threshold on the normalised contrast, -1..1 (0: the --threshold level)")
    s.add_argument("--threshold", choices=["otsu", "median"], default="otsu",
                   help="grey level of contrast 0: Otsu's threshold (default) or the median")
    s.add_argument("--resolution", default=None,
                   help='instrument resolution, e.g. "30 nm": smaller domains count as unresolved')
    s.add_argument("--smoothing", default=None, help='smoothing length, e.g. "10 nm"')
    s.add_argument("--background", default="plane", choices=["none", "mean", "plane", "highpass"],
                   help="background subtraction")
    s.add_argument("--highpass-length", default=None,
                   help='length of the Gaussian high-pass for --background highpass, e.g. "400 nm"')
    s.add_argument("--mask", default=None, help="image of invalid pixels (non-zero = invalid)")
    s.set_defaults(func=_cmd_image)

    s = sub.add_parser("movie", help="MP4 (or GIF) of the spin field of a run folder")
    s.add_argument("run_dir")
    s.add_argument("-o", "--output", default=None, help="movie file (default RUN_DIR/movie.mp4)")
    s.add_argument("--fps", type=int, default=20)
    s.add_argument("--colour", choices=["mz", "angle"], default="mz")
    s.add_argument("--gif", action="store_true", help="write a GIF instead of an MP4")
    s.add_argument("--fwhm", default=None,
                   help='instrument resolution for a side-by-side view, e.g. "30 nm"')
    s.add_argument("--pixel", default=None, help='instrument pixel size, e.g. "10 nm"')
    s.add_argument("--noise", type=float, default=0.0,
                   help="instrument noise (fraction of full contrast)")
    s.set_defaults(func=_cmd_movie)

    s = sub.add_parser("plot", help="PNG figures of a run folder (sweep curves or time series)")
    s.add_argument("run_dir")
    s.set_defaults(func=_cmd_plot)

    s = sub.add_parser("plan", help="heating plan for a film and an instrument")
    s.add_argument("file", help="scenario with a temperature sweep")
    s.add_argument("-o", "--output", required=True, help="folder for the sweep and the plan")
    s.add_argument("--resolution", default=None, help='instrument resolution, e.g. "30 nm"')
    s.add_argument("--exposure", default=None, help='exposure time, e.g. "10 ms"')
    s.add_argument("--field-of-view", default=None, help='field of view, e.g. "5 um"')
    s.add_argument("--workers", type=int, default=None)
    s.add_argument("--reuse", action="store_true",
                   help="build the plan from the sweep in the folder (an unfinished one is "
                        "continued; it must be of the same scenario)")
    s.add_argument("--overwrite", action="store_true",
                   help="delete the run in the folder and start afresh")
    s.add_argument("--instrument", default=None,
                   help="name of one of the scenario's instruments (default: the first)")
    s.add_argument("--points", type=int, default=15, help="number of temperatures in the schedule")
    s.add_argument("--dwell", default="5 min", help='dwell per temperature point, e.g. "10 min"')
    s.add_argument("--llg-duration", default="150 ps",
                   help='length of each stochastic LLG run for the fluctuation time, e.g. "200 ps"')
    s.add_argument("-q", "--quiet", action="store_true")
    s.set_defaults(func=_cmd_plan)

    # --- lab data to the model and back (thinfilm/cli_lab.py) ---
    from thinfilm.cli_lab import add_lab_commands

    add_lab_commands(sub)
    return p


def main(argv=None):
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.threads is not None:
        from thinfilm.config import set_threads

        set_threads(args.threads)

    def show(message, category, filename, lineno, file=None, line=None):
        print(f"thinfilm: warning: {message}", file=sys.stderr)

    warnings.showwarning = show
    warnings.simplefilter("always", ThinFilmWarning)
    t = time.time()
    try:
        with command_line_spelling():
            rc = args.func(args)
    except ThinFilmError as exc:
        print(f"thinfilm: error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:  # the file system refused (no permission, disk full, a file in the way)
        from thinfilm._io import OutputError, os_error

        err = exc if isinstance(exc, OutputError) else os_error(exc, doing="use it")
        print(f"thinfilm: error: {err}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        flag = "--reuse" if getattr(args, "command", "") == "plan" else "--resume"
        print(f"thinfilm: interrupted; finished parts are saved. Continue with the same command "
              f"and {flag}.", file=sys.stderr)
        return 130
    if getattr(args, "command", "") in ("run", "demo", "plan"):
        print(f"wall time {time.time() - t:.1f} s")
    return rc


if __name__ == "__main__":
    sys.exit(main())
