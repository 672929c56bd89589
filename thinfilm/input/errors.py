"""Exception and warning classes of thinfilm, and how an error message spells an option."""

import contextlib

__all__ = [
    "ThinFilmError",
    "ScenarioError",
    "InputError",
    "StabilityError",
    "ThinFilmWarning",
    "option",
    "command_line_spelling",
]

# Python keyword -> command-line flag where the flag is not "--" + keyword with "-" for "_"
_FLAGS = {"out_dir": "-o", "n_points": "--points"}
_SPELLING = {"cli": False}


def option(keyword, value="True"):
    """An option as the caller spells it, for error messages.

    ``option("resume")`` is ``"--resume"`` while the command line runs (inside
    :func:`command_line_spelling`) and ``"resume=True"`` for a Python caller;
    ``option("out_dir")`` is ``"-o"`` or ``"out_dir"``; ``value=None`` leaves the value out.
    """
    if _SPELLING["cli"]:
        return _FLAGS.get(keyword, "--" + keyword.replace("_", "-"))
    return keyword if value is None or keyword == "out_dir" else f"{keyword}={value}"


@contextlib.contextmanager
def command_line_spelling():
    """Within this block error messages name command-line flags instead of keywords."""
    before = _SPELLING["cli"]
    _SPELLING["cli"] = True
    try:
        yield
    finally:
        _SPELLING["cli"] = before


class ThinFilmError(Exception):
    """Base class of every error thinfilm raises on purpose (shown to users as one paragraph)."""


class ScenarioError(ThinFilmError, ValueError):
    """A scenario file or dictionary is invalid.

    Parameters
    ----------
    message : str
        What is wrong, the rule and the value.
    path : str, optional
        File the scenario came from (``"<dict>"`` when built in Python).
    key : str, optional
        Dotted key path inside the scenario, e.g. ``"material.anisotropy.axis"``.
    """

    def __init__(self, message, *, path=None, key=None):
        self.path = path
        self.key = key
        where = ": ".join(p for p in (path, key) if p)
        super().__init__(f"{where}: {message}" if where else message)


class InputError(ThinFilmError, ValueError):
    """A command-line value, image or run folder is invalid."""


class StabilityError(ThinFilmError, RuntimeError):
    """The integration blew up; carries the suggested largest time step in fs."""

    def __init__(self, message, *, suggested_time_step_fs=None):
        self.suggested_time_step_fs = suggested_time_step_fs
        super().__init__(message)


class ThinFilmWarning(UserWarning):
    """Warnings about statistics (too few independent samples) or physics (time step)."""
