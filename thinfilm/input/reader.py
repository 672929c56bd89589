"""Reading a nested YAML mapping with key paths for one-paragraph error messages."""

import difflib
import math

import numpy as np

from thinfilm.input.errors import ScenarioError
from thinfilm.input.units import parse_quantity

__all__ = ["Reader"]


class Reader:
    """Walks a nested mapping, remembering the key path for error messages."""

    def __init__(self, data, path, prefix=""):
        self.data = data
        self.path = path
        self.prefix = prefix
        if not isinstance(data, dict):
            raise self.error(f"must be a mapping of keys, got {data!r}", "")

    def key(self, name):
        return f"{self.prefix}.{name}" if self.prefix else name

    def error(self, message, name):
        return ScenarioError(message, path=self.path,
                             key=self.key(name) if name else self.prefix or None)

    def check_keys(self, allowed):
        for k in self.data:
            if k not in allowed:
                close = difflib.get_close_matches(str(k), list(allowed), n=1, cutoff=0.6)
                hint = f" Did you mean {close[0]!r}?" if close else ""
                raise self.error(
                    f"unknown key {k!r}; allowed keys here are "
                    f"{', '.join(sorted(allowed))}.{hint}", k
                )

    def has(self, name):
        return name in self.data and self.data[name] is not None

    def raw(self, name, default=None, required=False):
        if name not in self.data or self.data[name] is None:
            if required:
                raise self.error("is required but missing", name)
            return default
        return self.data[name]

    def sub(self, name, required=False):
        val = self.raw(name, {} if not required else None, required)
        return Reader(val, self.path, self.key(name))

    def quantity(self, name, kind, *, default=None, required=False, positive=False, nonneg=False):
        val = self.raw(name, default, required)
        if val is None:
            return None
        try:
            q = parse_quantity(val, kind)
        except ValueError as exc:
            raise self.error(str(exc), name) from None
        if positive and not q > 0:
            raise self.error(f"must be positive, got {val!r}", name)
        if nonneg and q < 0:
            raise self.error(f"must not be negative, got {val!r}", name)
        return q

    def number(self, name, *, default=None, required=False, lo=None, hi=None, integer=False):
        val = self.raw(name, default, required)
        if val is None:
            return None
        kind = "an integer" if integer else "a number"
        if (isinstance(val, bool) or not isinstance(val, (int, float))
                or (integer and not float(val).is_integer())):
            raise self.error(f"must be {kind}, got {val!r}", name)
        if not math.isfinite(val):
            raise self.error(f"must be finite, got {val!r}", name)
        if lo is not None and val < lo:
            raise self.error(f"must be at least {lo}, got {val!r}", name)
        if hi is not None and val > hi:
            raise self.error(f"must be at most {hi}, got {val!r}", name)
        return int(val) if integer else float(val)

    def flag(self, name, *, default=False):
        val = self.raw(name, default)
        if not isinstance(val, bool):
            raise self.error(f"must be true or false, got {val!r}", name)
        return val

    def choice(self, name, allowed, *, default=None, required=False):
        val = self.raw(name, default, required)
        if val is not None and val not in allowed:
            close = difflib.get_close_matches(str(val), list(allowed), n=1, cutoff=0.5)
            hint = f" Did you mean {close[0]!r}?" if close else ""
            raise self.error(f"must be one of {', '.join(allowed)}; got {val!r}.{hint}", name)
        return val

    def vector(self, name, *, unit_kind=None, default=None, required=False, nonzero=False):
        """A 3-vector: plain list (direction) or {value: [..], unit: ..} when unit_kind is set."""
        val = self.raw(name, default, required)
        if val is None:
            return None
        scale = 1.0
        if unit_kind is not None:
            if not isinstance(val, dict) or set(val) != {"value", "unit"}:
                raise self.error(
                    f"must be written as {{value: [x, y, z], unit: T}}; got {val!r}", name)
            unit = val["unit"]
            try:
                scale = parse_quantity(f"1 {unit}", unit_kind)
            except ValueError as exc:
                raise self.error(f"unit {unit!r}: {exc}", name) from None
            val = val["value"]
        if (not isinstance(val, (list, tuple)) or len(val) != 3
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in val)):
            raise self.error(f"must be a list of three numbers, got {val!r}", name)
        vec = np.asarray(val, dtype=np.float64) * scale
        if not np.all(np.isfinite(vec)):
            raise self.error(f"must be finite, got {val!r}", name)
        if nonzero and not np.linalg.norm(vec) > 0:
            raise self.error(f"must be a non-zero 3-vector, got {val!r}", name)
        return vec
