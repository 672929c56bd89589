"""Heating plan texts and figures: plan.md, the short summary, notes and plan_*.png.

Every function reads the plan dictionary built by :func:`thinfilm.plan.make_plan`
(temperatures in K, lengths in nm, times in ps or s as the key names say). The texts live in
:mod:`thinfilm.plan.report_texts`, the figures in :mod:`thinfilm.plan.report_figures`; this
module gathers them under their old names.
"""

from thinfilm.plan.report_figures import (
    BLUE,
    GREEN,
    GREY,
    ORANGE,
    PURPLE,
    SKY,
    VERMILION,
    figures,
    no_plan_figures,
)
from thinfilm.plan.report_texts import (
    CAUTIONS,
    command,
    markdown,
    no_plan_markdown,
    no_plan_summary,
    resolved_note,
    summary_text,
    timescale_note,
)

__all__ = ["resolved_note", "timescale_note", "command", "figures", "markdown", "summary_text",
           "CAUTIONS", "no_plan_figures", "no_plan_markdown", "no_plan_summary",
           "BLUE", "GREEN", "GREY", "ORANGE", "PURPLE", "SKY", "VERMILION"]
