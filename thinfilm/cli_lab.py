"""Command-line subcommands from the lab's numbers to the model and back: fit-mt (critical fit of
a measured M(T)), calibrate (J from a measured Tc), image-series, compare, report.

Each command parses its arguments, calls the API and prints; no physics here.
"""

from pathlib import Path

from thinfilm.input.errors import InputError

__all__ = ["add_lab_commands"]


def _temperature(text, what):
    from thinfilm.input.units import parse_quantity

    try:
        return parse_quantity(text, "temperature")
    except ValueError as exc:
        raise InputError(f"{what}: {exc}") from None


def _cmd_fit_mt(args):
    from thinfilm.render.mt_plot import write_mt_fit

    window = None
    if args.window:
        window = tuple(_temperature(w, "--window") for w in args.window)
    corr = {"auto": "auto", "yes": True, "no": False}[args.correction]
    res = write_mt_fit(args.file, args.output, window=window, correction=corr,
                       delta=args.correction_exponent, t_max=args.t_max, signal=args.signal,
                       error=args.error)
    lo, hi = res["window_K"]
    print(f"M(T) fit of {args.file} ({res['signal_name']}, {res['signal_unit']}): "
          f"{res['n_points']} points in {lo:g} .. {hi:g} K ({res['window_how']})")
    print(f"  Tc   = {_digits(res['tc_K'], res['tc_err_K'])} K (fit); window sensitivity "
          f"+- {res['tc_window_K']:.2g} K")
    print(f"  beta = {_digits(res['beta'], res['beta_err'])} (fit); window sensitivity "
          f"+- {res['beta_window']:.2g}")
    if res["correction"]:
        print(f"  correction term (1 + b t^{res['delta']:g}) kept: b = {res['correction_b']:.3g}")
    print(f"  chi^2 = {res['chi2']:.3g} for {res['dof']} degrees of freedom (p = "
          f"{res['p_value']:.2g}); errors from the {res['error_source']}")
    print("verdict: " + res["verdict"]["text"])
    print(f"written to {Path(args.output) / 'mt_fit.json'} and {res['figure']}")
    return 0


def _quantity(text, kind, what):
    from thinfilm.input.units import parse_quantity

    try:
        return parse_quantity(text, kind)
    except ValueError as exc:
        raise InputError(f"{what}: {exc}") from None


def _cmd_calibrate(args):
    from thinfilm.input.calibration import (
        ISING_TC,
        TABLE_PATH,
        calibration_table,
        continuum_from_tc,
        exchange_from_tc,
    )

    if args.table:
        tab = calibration_table()
        print(f"kB Tc / J against K/J ({TABLE_PATH}):")
        for shape, (x, t, e) in sorted(tab.items()):
            for a, b, c in zip(x, t, e, strict=True):
                print(f"  {shape:10s} K/J = {a:<7g} kB Tc/J = {_digits(b, c)}")
            print(f"  {shape:10s} K/J = inf     kB Tc/J = {ISING_TC[shape]:.6f} (exact Ising "
                  "limit, --anisotropy ising)")
        return 0
    if not args.tc:
        raise InputError("calibrate: give --tc (the measured Curie temperature, e.g. "
                         '"290 K"), or --table to print the table')
    tc = _quantity(args.tc, "temperature", "--tc")
    tc_err = _quantity(args.tc_error, "temperature", "--tc-error") if args.tc_error else 0.0
    continuum = [args.ku, args.ms, args.thickness]
    if any(continuum) and args.anisotropy:
        raise InputError("calibrate: give either --anisotropy (K per site) or --ku, --ms and "
                         "--thickness (continuum film), not both")
    if any(continuum):
        if not all(continuum) or not args.spacing:
            raise InputError("calibrate: a continuum film needs --ku, --ms, --thickness and "
                             "--spacing (the lattice spacing, e.g. \"0.3 nm\")")
        ku = _quantity(args.ku, "energy_density", "--ku")
        ku_err = _quantity(args.ku_error, "energy_density", "--ku-error") if args.ku_error else 0.0
        res = continuum_from_tc(tc, args.lattice, _quantity(args.spacing, "length", "--spacing"),
                                ku, _quantity(args.ms, "magnetisation", "--ms"),
                                _quantity(args.thickness, "length", "--thickness"),
                                tc_err_K=tc_err, anisotropy_density_err=ku_err,
                                shape_anisotropy=args.shape_anisotropy)
    elif args.anisotropy:
        if args.anisotropy.strip().lower() == "ising":
            k, k_err = "ising", 0.0
        else:
            k = _quantity(args.anisotropy, "energy", "--anisotropy")
            k_err = (_quantity(args.anisotropy_error, "energy", "--anisotropy-error")
                     if args.anisotropy_error else 0.0)
        res = exchange_from_tc(tc, args.lattice, k, tc_err_K=tc_err, anisotropy_err_J=k_err)
    else:
        raise InputError("calibrate: give the anisotropy, --anisotropy (K per site, e.g. "
                         '"0.05 meV", or "ising") or --ku, --ms, --thickness and --spacing')
    print(f"{args.lattice} lattice, Tc = {_digits(tc, tc_err)} K:")
    print_calibration(res)
    return 0


def _cmd_image_series(args):
    from thinfilm.analysis.image_series import index_from_folder, read_index
    from thinfilm.render.series_plot import write_image_series

    if args.index and (args.folder or args.pattern):
        raise InputError("image-series: give either an index CSV or --folder with --pattern, "
                         "not both")
    if args.index:
        rows, source = read_index(args.index), args.index
    elif args.folder and args.pattern and args.pixel_size:
        rows = index_from_folder(args.folder, args.pattern, pixel_size=args.pixel_size)
        source = f"{args.folder}/{args.pattern}"
    else:
        raise InputError("image-series: give an index CSV (columns file, temperature_K, "
                         "pixel_size_nm), or --folder, --pattern (with {T} at the temperature "
                         "in K) and --pixel-size")
    res = write_image_series(rows, args.output, level=args.level, smoothing=args.smoothing,
                         background=args.background, mask=args.mask,
                         highpass_length=args.highpass_length, source=source)
    tab = res["table"]
    print(f"image series {source}: {len(rows)} images, pixel {rows[0][2]}")
    print("  T (K)   xi (nm)          period (nm)   stripe order   walls (1/um)")
    for k in range(len(rows)):
        def pm(col, k=k):
            return _digits(tab[col][k], tab[col + "_err"][k])

        per = "-" if tab["period_nm"][k] != tab["period_nm"][k] else pm("period_nm")
        print(f"  {tab['temperature_K'][k]:<7.5g} {pm('correlation_length_nm'):16s} "
              f"{per:13s} {pm('stripe_order'):14s} {pm('wall_length_per_area_per_um')}")
    print("  (period -: no peak of S(k) away from the smallest wavenumber, not determined)")
    print(f"written to {Path(args.output) / 'image_series.csv'} and {res['figure'].name}")
    return 0


def _cmd_compare(args):
    from thinfilm.render.compare_plot import compare_run

    tc = _temperature(args.tc_measured, "--tc-measured") if args.tc_measured else None
    tc_err = _temperature(args.tc_measured_error, "--tc-measured-error") \
        if args.tc_measured_error else None
    info = compare_run(args.run_dir, args.output, mt=args.mt, series=args.series,
                       tc_measured_K=tc, tc_measured_err_K=tc_err)
    print(f"measured beside {args.run_dir} (largest lattice L = {info['simulated_size']})")
    ts, tm = info["simulated_tc_K"], info["measured_tc_K"]
    print(f"  Tc run {_digits(ts, info['simulated_tc_err_K'] or 0) if ts else 'unknown'} K; "
          f"Tc sample {_digits(tm, info['measured_tc_err_K'] or 0) if tm else 'unknown'} K")
    for q, off in info["offsets"].items():
        if "offset_K" in off:
            sc = f", scale s = {_digits(off['scale'], off['scale_err'])}" \
                if off["scale"] != 1.0 else ""
            print(f"  {q}: thermometer offset dT = {_digits(off['offset_K'], off['offset_err_K'])}"
                  f" K from {off['n_points']} points{sc} (reported, not applied)")
        else:
            print(f"  {q}: no offset: {off['note']}")
    print(f"written to {Path(args.output) / 'compare.csv'} and {info['figure']}")
    return 0


def _cmd_report(args):
    from thinfilm.render.html_report import write_html_report

    print(f"report: {write_html_report(args.run_dir)}")
    return 0


def add_lab_commands(sub):
    """Add this module's subcommands to an argparse subparsers object."""
    s = sub.add_parser("compare", help="measured M(T) and/or image-series curves beside a "
                                       "simulated sweep, on T and T/Tc, with the thermometer "
                                       "offset")
    s.add_argument("run_dir", help="sweep run folder (observables.csv, tc.json)")
    s.add_argument("--mt", default=None, help="measured M(T) CSV (as for fit-mt)")
    s.add_argument("--series", default=None, help="image_series.csv from image-series")
    s.add_argument("--tc-measured", default=None,
                   help='the sample\'s Tc for the T/Tc axis (default: fitted from --mt)')
    s.add_argument("--tc-measured-error", default=None, help="its standard error")
    s.add_argument("-o", "--output", required=True, help="output folder")
    s.set_defaults(func=_cmd_compare)

    s = sub.add_parser("report", help="one offline HTML page of a run folder's figures, tables, "
                                      "plan and movies")
    s.add_argument("run_dir")
    s.set_defaults(func=_cmd_report)

    s = sub.add_parser("image-series", help="a series of domain images against temperature "
                                            "analysed into one table and figure")
    s.add_argument("index", nargs="?", default=None,
                   help="CSV index with columns file, temperature_K, pixel_size_nm")
    s.add_argument("--folder", default=None, help="folder of the images (instead of an index)")
    s.add_argument("--pattern", default=None,
                   help='file pattern with {T} at the temperature in K, e.g. "film_{T}K.tif"')
    s.add_argument("--pixel-size", default=None, help='pixel size with --folder, e.g. "5 nm"')
    s.add_argument("-o", "--output", required=True, help="output folder")
    s.add_argument("--level", type=float, default=0.0,
                   help="threshold on the normalised contrast (-1..1), as thinfilm image")
    s.add_argument("--smoothing", default=None, help='smoothing length, e.g. "10 nm"')
    s.add_argument("--background", default="plane", choices=["none", "mean", "plane", "highpass"])
    s.add_argument("--highpass-length", default=None, help='e.g. "400 nm"')
    s.add_argument("--mask", default=None, help="image of invalid pixels (non-zero = invalid)")
    s.set_defaults(func=_cmd_image_series)

    s = sub.add_parser("calibrate", help="exchange J (and stiffness A) from a measured Curie "
                                         "temperature and the anisotropy")
    s.add_argument("--tc", default=None, help='measured Curie temperature, e.g. "290 K"')
    s.add_argument("--tc-error", default=None, help='its standard error, e.g. "3 K"')
    s.add_argument("--lattice", choices=["square", "triangular", "honeycomb"], default="square")
    s.add_argument("--anisotropy", default=None,
                   help='K per site, e.g. "0.05 meV" (or "ising" for the Ising limit)')
    s.add_argument("--anisotropy-error", default=None, help="standard error of K per site")
    s.add_argument("--ku", default=None, help='anisotropy density, e.g. "0.8 MJ/m^3"')
    s.add_argument("--ku-error", default=None, help="standard error of Ku")
    s.add_argument("--ms", default=None, help='saturation magnetisation, e.g. "1.1 MA/m"')
    s.add_argument("--thickness", default=None, help='film thickness, e.g. "0.6 nm"')
    s.add_argument("--spacing", default=None, help='lattice spacing, e.g. "0.3 nm"')
    s.add_argument("--shape-anisotropy", action="store_true",
                   help="subtract mu0 Ms^2 / 2 from Ku (thin-film shape anisotropy)")
    s.add_argument("--table", action="store_true", help="print the calibration table")
    s.set_defaults(func=_cmd_calibrate)

    s = sub.add_parser("fit-mt", help="critical fit M0 (1 - T/Tc)^beta of a measured M(T) CSV "
                                      "and the universality classes its beta allows")
    s.add_argument("file", help="CSV: temperature column (unit in the header, e.g. "
                                "temperature_K), a signal column in any unit, optional error")
    s.add_argument("-o", "--output", required=True, help="output folder")
    s.add_argument("--window", nargs=2, metavar=("T_LOW", "T_HIGH"), default=None,
                   help='fit window, e.g. --window "250 K" "290 K" (default: automatic)')
    s.add_argument("--correction", choices=["auto", "yes", "no"], default="auto",
                   help="correction term (1 + b t^Delta): where the data ask (F-test), always, "
                        "never")
    s.add_argument("--correction-exponent", type=float, default=1.0,
                   help="Delta of the correction term (1: analytic, 2D Ising; about 0.5 for "
                        "3D classes)")
    s.add_argument("--t-max", type=float, default=0.3,
                   help="automatic windows stay within 1 - T/Tc <= this (default 0.3)")
    s.add_argument("--signal", default=None, help="header of the signal column (default: 2nd)")
    s.add_argument("--error", default=None, help="header of the error column (default: a "
                                                 "column named *err*, *sigma*, *std*)")
    s.set_defaults(func=_cmd_fit_mt)


def _digits(value, err):
    """value +- err with the digits the error supports (two significant digits of the error)."""
    import math

    if not (err > 0 and math.isfinite(err)):
        return f"{value:.4g}"
    nd = max(0, 1 - int(math.floor(math.log10(err))))
    return f"{value:.{nd}f} +- {err:.{nd}f}"


def print_calibration(c, prefix="  "):
    """Lines of `thinfilm check` and `thinfilm calibrate` for an exchange set from a measured Tc."""
    print(f"{prefix}J = {_digits(c['exchange_meV'], c['exchange_err_meV'])} meV per bond "
          f"(E = -J Si.Sj, each bond once; K/J = {c['k_over_j']:.3g})")
    pad = " " * len(prefix)
    if "stiffness_J_per_m" in c:
        a, e = c["stiffness_J_per_m"] * 1e12, c["stiffness_err_J_per_m"] * 1e12
        print(f"{pad}A = {_digits(a, e)} pJ/m (continuum film)")
    origin, _, caution = c["origin"].partition("; caution: ")
    print(f"{pad}origin: {origin}; the error carries the errors of Tc and of the table")
    if caution:
        print(f"{pad}caution: {caution}")
