"""Numbers printed with the digits their error supports.

Rounding rule (common practice, as in the Particle Data Group's reviews): the error keeps two
significant digits when its first two digits lie between 10 and 35, else one; the value is
rounded to the same decimal place. A value without an error keeps ``digits`` significant
digits.
"""

import math

__all__ = ["decimals_for", "fmt_pm", "fmt_value", "round_pm"]


def decimals_for(err):
    """Number of decimals (may be negative) at which ``err`` is rounded; None without an error."""
    if err is None or not math.isfinite(err) or err <= 0:
        return None
    exp = math.floor(math.log10(err))
    lead = err / 10.0**exp  # 1 <= lead < 10
    if lead >= 9.5:  # rounds up to the next decade
        exp, lead = exp + 1, 1.0
    return -(exp - 1) if lead < 3.55 else -exp


def round_pm(value, err):
    """(value text, error text) rounded to the error's digits; err text None without an error."""
    d = decimals_for(err)
    if d is None:
        return f"{value:.4g}", None
    if d <= 0:
        q = 10.0 ** (-d)
        return f"{round(value / q) * q:.0f}", f"{round(err / q) * q:.0f}"
    return f"{value:.{d}f}", f"{err:.{d}f}"


def fmt_value(value, err=None, digits=4):
    """The value alone with the digits its error supports ('41.64'); 'n/a' for None or NaN."""
    if value is None or not math.isfinite(value):
        return "n/a"
    if decimals_for(err) is None:
        return f"{value:.{digits}g}"
    return round_pm(value, err)[0]


def fmt_pm(value, err=None, unit="K", digits=4, pm="+-"):
    """'41.64 +- 0.05 K'; '41.6 K' without an error (``digits`` significant); 'n/a' for None."""
    if value is None or not math.isfinite(value):
        return "n/a"
    v, e = round_pm(value, err) if decimals_for(err) is not None else (f"{value:.{digits}g}", None)
    text = v if e is None else f"{v} {pm} {e}"
    return f"{text} {unit}".rstrip()
