"""The table of temperature-dependent macroscopic parameters that feeds the coarse film.

Columns (SI units in the names): temperature_K, m_e (reduced spontaneous magnetisation,
Ms(T) = m_e Ms(0)), chi_par_per_T and chi_perp_per_T (reduced susceptibilities, 1/T),
K_J_per_m3, A_J_per_m, each with an ``_err`` column (NaN where the value was not measured
but filled in by a stated law). Header lines starting with '#' hold Ms0_A_per_m, Tc_K,
thickness_nm, the source and every assumption.

Values between rows are interpolated linearly in T (m_e, chi, K, A). The coarse film uses the
table only below Tc unless it also holds rows above Tc.

A lab table (:func:`table_from_lab`, chosen by :meth:`ParameterTable.read` when the CSV has a
column Ms_A_per_m) gives the measured Ms(T) (and K(T) if known); the rest is filled in by
stated laws, each written into the table's assumptions:

* m_e = Ms(T) / Ms(0), Ms(0) from the header;
* K(T) = K(0) m_e^3 (Callen and Callen, J. Phys. Chem. Solids 27, 1271 (1966), single-ion
  uniaxial anisotropy) unless a K_J_per_m3 column is given;
* A(T) = A(0) m_e^x with x from the header (A_exponent; default 2, mean-field theory; measure
  it on the atomistic model, validation/coarse_parameter_table.py);
* chi_par from classical mean-field theory with the measured m_e: chi_par = (mu_at / kB T)
  L'(xi) / (1 - (3 Tc / T) L'(xi)), xi = 3 Tc m_e / T, L the Langevin function, mu_at the
  atomic moment from the header (Garanin, Phys. Rev. B 55, 3050 (1997), mean-field LLB);
* chi_perp = Ms(0) m_e^2 / (2 K(T)) (the transverse susceptibility of uniaxial anisotropy).
"""

import io
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from thinfilm._io import atomic_write_text
from thinfilm.input.units import KB_J_PER_K, MU_B_J_PER_T

__all__ = ["ParameterTable", "COLUMNS", "TableError", "table_from_lab", "LAB_KEYS"]

COLUMNS = ("temperature_K", "m_e", "chi_par_per_T", "chi_perp_per_T", "K_J_per_m3", "A_J_per_m")


class TableError(ValueError):
    """A parameter table that cannot be used; the message names the file and the column."""


@dataclass
class ParameterTable:
    temperature_K: np.ndarray
    m_e: np.ndarray
    chi_par_per_T: np.ndarray
    chi_perp_per_T: np.ndarray
    K_J_per_m3: np.ndarray
    A_J_per_m: np.ndarray
    errors: dict = field(default_factory=dict)  # column -> error array
    ms0_A_per_m: float = float("nan")
    tc_K: float = float("nan")
    thickness_nm: float = float("nan")
    source: str = ""
    assumptions: tuple = ()

    def __post_init__(self):
        for c in COLUMNS:
            setattr(self, c, np.asarray(getattr(self, c), dtype=np.float64))
        order = np.argsort(self.temperature_K)
        for c in COLUMNS:
            setattr(self, c, getattr(self, c)[order])
        self.errors = {k: np.asarray(v, dtype=np.float64)[order] for k, v in self.errors.items()}

    def at(self, temperature_K):
        """Dict of the parameters at one temperature (linear interpolation; outside the table
        range a ValueError: the table does not determine them)."""
        t = float(temperature_K)
        lo, hi = self.temperature_K[0], self.temperature_K[-1]
        if not (lo - 1e-9 <= t <= hi + 1e-9):
            raise ValueError(f"temperature {t:g} K is outside the parameter table "
                             f"({lo:g} K to {hi:g} K); extend the table")
        out = {"temperature_K": t}
        for c in COLUMNS[1:]:
            out[c] = float(np.interp(t, self.temperature_K, getattr(self, c)))
        return out

    # ------------------------------------------------------------------ CSV
    def to_csv(self, path):
        buf = io.StringIO()
        buf.write(f"# Ms0_A_per_m = {self.ms0_A_per_m!r}\n")
        buf.write(f"# Tc_K = {self.tc_K!r}\n")
        buf.write(f"# thickness_nm = {self.thickness_nm!r}\n")
        buf.write(f"# source = {self.source}\n")
        for a in self.assumptions:
            buf.write(f"# assumption: {a}\n")
        cols = []
        for c in COLUMNS:
            cols.append(c)
            if c != "temperature_K":
                cols.append(c + "_err")
        buf.write(",".join(cols) + "\n")
        nan = np.full(len(self.temperature_K), np.nan)
        for k in range(len(self.temperature_K)):
            row = []
            for c in COLUMNS:
                row.append(repr(float(getattr(self, c)[k])))
                if c != "temperature_K":
                    row.append(repr(float(self.errors.get(c, nan)[k])))
            buf.write(",".join(row) + "\n")
        atomic_write_text(path, buf.getvalue())
        return Path(path)

    @classmethod
    def read(cls, path):
        """A parameter table or a lab table (column Ms_A_per_m), by the CSV's header."""
        head = ""
        try:
            for ln in Path(path).read_text(encoding="utf-8").splitlines():
                if ln.strip() and not ln.startswith("#"):
                    head = ln
                    break
        except OSError as exc:
            raise TableError(f"{path}: cannot read the parameter table ({exc})") from None
        if "Ms_A_per_m" in [h.strip() for h in head.split(",")]:
            return table_from_lab(path)
        return cls.from_csv(path)

    @classmethod
    def from_csv(cls, path):
        path = Path(path)
        try:
            lines = path.read_text(encoding="utf-8").splitlines()
        except OSError as exc:
            raise TableError(f"{path}: cannot read the parameter table ({exc})") from None
        meta, assumptions, body = {}, [], []
        for ln in lines:
            if ln.startswith("# assumption:"):
                assumptions.append(ln.split(":", 1)[1].strip())
            elif ln.startswith("#") and "=" in ln:
                k, v = ln[1:].split("=", 1)
                meta[k.strip()] = v.strip()
            elif ln.strip() and not ln.startswith("#"):
                body.append(ln)
        if not body:
            raise TableError(f"{path}: no header line with columns {', '.join(COLUMNS)}")
        head = [h.strip() for h in body[0].split(",")]
        missing = [c for c in COLUMNS if c not in head]
        if missing:
            raise TableError(f"{path}: the parameter table lacks the column(s) "
                             f"{', '.join(missing)}; it needs {', '.join(COLUMNS)} (SI units)")
        try:
            data = np.array([[float(x) for x in r.split(",")] for r in body[1:]])
        except ValueError as exc:
            raise TableError(f"{path}: a value is not a number ({exc})") from None
        if data.ndim != 2 or data.shape[0] < 2:
            raise TableError(f"{path}: the parameter table needs at least two rows")
        col = {h: data[:, k] for k, h in enumerate(head)}
        for key in ("Ms0_A_per_m", "thickness_nm"):
            if key not in meta:
                raise TableError(f"{path}: the header line '# {key} = <value>' is missing")
        errs = {c: col[c + "_err"] for c in COLUMNS[1:] if c + "_err" in col}
        return cls(*(col[c] for c in COLUMNS), errors=errs,
                   ms0_A_per_m=float(meta["Ms0_A_per_m"]),
                   tc_K=float(meta.get("Tc_K", "nan")), thickness_nm=float(meta["thickness_nm"]),
                   source=meta.get("source", str(path)), assumptions=tuple(assumptions))

    def describe(self):
        return {"source": self.source, "Ms0_A_per_m": self.ms0_A_per_m, "Tc_K": self.tc_K,
                "thickness_nm": self.thickness_nm, "rows": len(self.temperature_K),
                "temperature_range_K": [float(self.temperature_K[0]),
                                        float(self.temperature_K[-1])],
                "assumptions": list(self.assumptions)}

    def fitted_exponent(self, column, m_max=0.999, m_min=0.6):
        """Slope of ln(X / X(0)) against ln m_e over rows with m_min <= m_e <= m_max, with X(0)
        the given zero-temperature value in ``self.zero`` if present, else the first row.
        Returns (exponent, standard error) from a weighted least-squares fit; NaN if fewer than
        two rows qualify."""
        x0 = getattr(self, "zero", {}).get(column)
        sel = (self.m_e >= m_min) & (self.m_e <= m_max)
        if sel.sum() < 2 or x0 is None:
            return math.nan, math.nan
        lm = np.log(self.m_e[sel])
        ly = np.log(getattr(self, column)[sel] / x0)
        err = self.errors.get(column)
        w = None
        if err is not None and np.all(np.isfinite(err[sel])) and np.all(err[sel] > 0):
            w = getattr(self, column)[sel] / err[sel]
        # fit through the origin (X = X(0) at m = 1)
        if w is None:
            w = np.ones_like(lm)
        p = np.sum(w**2 * lm * ly) / np.sum(w**2 * lm**2)
        res = ly - p * lm
        dof = max(len(lm) - 1, 1)
        s2 = np.sum(w**2 * res**2) / dof
        return float(p), float(math.sqrt(s2 / np.sum(w**2 * lm**2)))


LAB_KEYS = ("Ms0_A_per_m", "thickness_nm", "A0_J_per_m", "Tc_K", "atomic_moment_muB")


def _langevin_prime(x):
    x = np.asarray(x, dtype=np.float64)
    small = np.abs(x) < 1e-3
    xs = np.where(small, 1.0, x)
    return np.where(small, 1.0 / 3.0 - x * x / 15.0, 1.0 / xs**2 - 1.0 / np.sinh(xs) ** 2)


def table_from_lab(path):
    """ParameterTable from a lab CSV: columns temperature_K, Ms_A_per_m (optional
    K_J_per_m3), header lines '# key = value' for Ms0_A_per_m, thickness_nm, A0_J_per_m,
    Tc_K, atomic_moment_muB, and K0_J_per_m3 (unless K is a column), optional A_exponent."""
    path = Path(path)
    try:
        lines = path.read_text(encoding="utf-8").splitlines()
    except OSError as exc:
        raise TableError(f"{path}: cannot read the lab table ({exc})") from None
    meta = {}
    body = []
    for ln in lines:
        if ln.startswith("#") and "=" in ln:
            k, v = ln[1:].split("=", 1)
            meta[k.strip()] = v.strip()
        elif ln.strip() and not ln.startswith("#"):
            body.append(ln)
    need = list(LAB_KEYS)
    head = [h.strip() for h in body[0].split(",")] if body else []
    if "K_J_per_m3" not in head:
        need.append("K0_J_per_m3")
    missing = [k for k in need if k not in meta]
    if missing:
        raise TableError(f"{path}: the lab table needs the header line(s) "
                         + ", ".join(f"'# {k} = <value>'" for k in missing)
                         + " (SI units as in the names)")
    try:
        val = {k: float(v) for k, v in meta.items() if k in need or k == "A_exponent"}
        data = np.array([[float(x) for x in r.split(",")] for r in body[1:]])
    except ValueError as exc:
        raise TableError(f"{path}: a value is not a number ({exc})") from None
    if "temperature_K" not in head or data.ndim != 2 or data.shape[0] < 2:
        raise TableError(f"{path}: the lab table needs columns temperature_K, Ms_A_per_m and at "
                         "least two rows")
    col = {h: data[:, k] for k, h in enumerate(head)}
    T = col["temperature_K"]
    ms0, tc = val["Ms0_A_per_m"], val["Tc_K"]
    me = col["Ms_A_per_m"] / ms0
    if np.any(me <= 0) or np.any(me > 1.0 + 1e-9) or np.any(T <= 0) or np.any(T >= tc):
        raise TableError(f"{path}: every row needs 0 < T < Tc and 0 < Ms(T) <= Ms0")
    x = val.get("A_exponent", 2.0)
    assumptions = [f"m_e = Ms(T) / Ms0 with Ms0 = {ms0:g} A/m (header)",
                   f"A(T) = A(0) m_e^{x:g}, A(0) = {val['A0_J_per_m']:g} J/m"
                   + (" (mean-field exponent)" if "A_exponent" not in val else "")]
    if "K_J_per_m3" in col:
        K = col["K_J_per_m3"]
        assumptions.append("K(T) measured (column K_J_per_m3)")
    else:
        K = val["K0_J_per_m3"] * me**3
        assumptions.append(f"K(T) = K(0) m_e^3 (Callen-Callen, single-ion), K(0) = "
                           f"{val['K0_J_per_m3']:g} J/m^3")
    A = val["A0_J_per_m"] * me**x
    mu = val["atomic_moment_muB"] * MU_B_J_PER_T
    xi = 3 * tc * me / T
    lp = _langevin_prime(xi)
    chi_par = mu / (KB_J_PER_K * T) * lp / (1 - 3 * tc / T * lp)
    assumptions.append(f"chi_par from classical mean field with the measured m_e, atomic moment "
                       f"{val['atomic_moment_muB']:g} muB, Tc = {tc:g} K")
    chi_perp = ms0 * me**2 / (2 * K)
    assumptions.append("chi_perp = Ms0 m_e^2 / (2 K(T))")
    return ParameterTable(T, me, chi_par, chi_perp, K, A, errors={}, ms0_A_per_m=ms0, tc_K=tc,
                          thickness_nm=val["thickness_nm"], source=f"lab table {path}",
                          assumptions=tuple(assumptions))
