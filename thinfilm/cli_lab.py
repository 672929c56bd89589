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
    from thinfilm.analysis.mt_fit import fit_magnetisation_file

    window = None
    if args.window:
        window = tuple(_temperature(w, "--window") for w in args.window)
    corr = {"auto": "auto", "yes": True, "no": False}[args.correction]
    res = fit_magnetisation_file(args.file, args.output, window=window, correction=corr,
                                 delta=args.correction_exponent, t_max=args.t_max,
                                 signal=args.signal, error=args.error)
    lo, hi = res["window_K"]
    print(f"M(T) fit of {args.file} ({res['signal_name']}, {res['signal_unit']}): "
          f"{res['n_points']} points in {lo:g} .. {hi:g} K ({res['window_how']})")
    print(f"  Tc   = {res['tc_K']:.5g} +- {res['tc_err_K']:.2g} K (fit); window sensitivity "
          f"+- {res['tc_window_K']:.2g} K")
    print(f"  beta = {res['beta']:.3f} +- {res['beta_err']:.3f} (fit); window sensitivity "
          f"+- {res['beta_window']:.3f}")
    if res["correction"]:
        print(f"  correction term (1 + b t^{res['delta']:g}) kept: b = {res['correction_b']:.3g}")
    print(f"  chi^2 = {res['chi2']:.3g} for {res['dof']} degrees of freedom (p = "
          f"{res['p_value']:.2g}); errors from the {res['error_source']}")
    print("verdict: " + res["verdict"]["text"])
    print(f"written to {Path(args.output) / 'mt_fit.json'} and {res['figure']}")
    return 0


def add_lab_commands(sub):
    """Add this module's subcommands to an argparse subparsers object."""
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
