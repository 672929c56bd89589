"""One offline HTML page per run folder: figures with their captions, tables, plan and movies.

The page (``report.html`` in the run folder) refers to the folder's own files by relative
paths and carries its style inline, so it opens in a browser without a network and moves with
the folder. Markdown (captions.md, plan.md) is converted by a small reader of the subset
thinfilm writes: headings, paragraphs, lists, bold, inline code and pipe tables.
"""

import csv
import html
import json
import re
from pathlib import Path

from thinfilm._io import atomic_write_text
from thinfilm.input.errors import InputError

__all__ = ["write_html_report", "markdown_to_html"]

SKIP_DIRS = {"points", "images", "checkpoint", "__pycache__"}
MAX_ROWS = 40
STYLE = """body{font-family:sans-serif;max-width:1100px;margin:2em auto;padding:0 1em;
color:#222;line-height:1.45}figure{margin:1.5em 0;border-top:1px solid #ddd;padding-top:.8em}
img,video{max-width:100%;height:auto}figcaption{font-size:.92em;color:#333}
table{border-collapse:collapse;font-size:.85em;margin:.5em 0}td,th{border:1px solid #ccc;
padding:2px 6px;text-align:right}th{background:#f3f3f3}nav a{margin-right:1em}
.note{color:#555;font-size:.9em}pre{background:#f6f6f6;padding:.5em;overflow-x:auto}"""


def _inline(text):
    t = html.escape(text, quote=False)
    t = re.sub(r"\*\*(.+?)\*\*", r"<strong>\1</strong>", t)
    return re.sub(r"`([^`]+)`", r"<code>\1</code>", t)


def markdown_to_html(text, *, level_shift=0):
    """HTML of the markdown subset thinfilm writes (headings shifted by ``level_shift``)."""
    out, para, items, rows = [], [], [], []

    def flush():
        if para:
            out.append("<p>" + _inline(" ".join(para)) + "</p>")
            para.clear()
        if items:
            out.append("<ul>" + "".join(f"<li>{_inline(i)}</li>" for i in items) + "</ul>")
            items.clear()
        if rows:
            body = [r for r in rows if not re.fullmatch(r"[\s|:-]+", r)]
            cells = [[c.strip() for c in r.strip().strip("|").split("|")] for r in body]
            head = "".join(f"<th>{_inline(c)}</th>" for c in cells[0])
            rest = "".join("<tr>" + "".join(f"<td>{_inline(c)}</td>" for c in r) + "</tr>"
                           for r in cells[1:])
            out.append(f"<table><tr>{head}</tr>{rest}</table>")
            rows.clear()

    for line in text.splitlines():
        s = line.rstrip()
        m = re.match(r"^(#{1,6})\s+(.*)$", s)
        if m:
            flush()
            n = min(6, len(m.group(1)) + level_shift)
            out.append(f"<h{n}>{_inline(m.group(2))}</h{n}>")
        elif s.lstrip().startswith(("- ", "* ")):
            if para or rows:
                flush()
            items.append(s.lstrip()[2:])
        elif s.lstrip().startswith("|"):
            if para or items:
                flush()
            rows.append(s)
        elif not s.strip():
            flush()
        elif items and line.startswith("  "):
            items[-1] += " " + s.strip()
        else:
            if items or rows:
                flush()
            para.append(s.strip())
    flush()
    return "\n".join(out)


def _captions(folder):
    path = folder / "captions.md"
    if not path.is_file():
        return {}
    sections, cur = {}, None
    for line in path.read_text(encoding="utf-8").splitlines():
        if line.startswith("## "):
            cur = line[3:].strip()
            sections[cur] = []
        elif cur is not None:
            sections[cur].append(line)
    return {k: "\n".join(v).strip() for k, v in sections.items()}


def _files(run_dir, suffixes):
    found = []
    for p in sorted(run_dir.rglob("*")):
        rel = p.relative_to(run_dir)
        if p.is_file() and p.suffix.lower() in suffixes and len(rel.parts) <= 3 \
                and not SKIP_DIRS & set(rel.parts[:-1]) and not p.name.startswith("."):
            found.append(p)
    return found


def _table_html(path, rel):
    with path.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    if not rows:
        return ""
    head = "".join(f"<th>{html.escape(c)}</th>" for c in rows[0])

    def cell(v):
        try:
            return f"{float(v):.6g}"
        except ValueError:
            return html.escape(v)

    body = "".join("<tr>" + "".join(f"<td>{cell(v)}</td>" for v in r) + "</tr>"
                   for r in rows[1:MAX_ROWS + 1])
    more = (f'<p class="note">first {MAX_ROWS} of {len(rows) - 1} rows; the whole table: '
            f'<a href="{html.escape(rel)}">{html.escape(rel)}</a></p>'
            if len(rows) - 1 > MAX_ROWS else
            f'<p class="note">file: <a href="{html.escape(rel)}">{html.escape(rel)}</a></p>')
    return f"<table><tr>{head}</tr>{body}</table>{more}"


def write_html_report(run_dir, *, out=None):
    """Write ``report.html`` gathering a run folder's figures, tables, plan and movies.

    Parameters
    ----------
    run_dir : path
        A run folder (sweep, dynamics, plan, compare or image-series output).
    out : path, optional
        Page to write (default ``run_dir/report.html``); it must lie inside ``run_dir`` so the
        relative links hold.

    Returns
    -------
    Path of the page.
    """
    run_dir = Path(run_dir).resolve()
    if not run_dir.is_dir():
        raise InputError(f"{run_dir}: no such run folder")
    out = run_dir / "report.html" if out is None else Path(out).resolve()
    if run_dir not in out.parents:
        raise InputError(f"{out}: the report must be written inside the run folder {run_dir} "
                         "so that its relative links to the figures hold")
    man = {}
    if (run_dir / "manifest.json").is_file():
        man = json.loads((run_dir / "manifest.json").read_text())
    name = (man.get("scenario") or {}).get("name") or run_dir.name
    parts = [f"<h1>thinfilm run: {html.escape(str(name))}</h1>",
             f'<p class="note">folder {html.escape(str(run_dir))}'
             + (f"; kind {html.escape(str(man.get('kind')))}" if man.get("kind") else "")
             + ". All links are relative: the page works offline and moves with the folder.</p>"]
    toc = []
    sections = []
    for key in ("tc.json", "compare.json", "mt_fit.json"):
        p = run_dir / key
        if p.is_file():
            data = json.loads(p.read_text())
            flat = {k: v for k, v in data.items() if isinstance(v, (int, float, str)) and
                    not isinstance(v, bool)}
            rows = "".join(f"<tr><th>{html.escape(k)}</th><td>{html.escape(str(v))}</td></tr>"
                           for k, v in flat.items())
            sections.append(("summary-" + p.stem, f"Summary: {key}", f"<table>{rows}</table>"))
    for md in _files(run_dir, {".md"}):
        if md.name != "captions.md":
            rel = md.relative_to(run_dir).as_posix()
            sections.append((f"text-{md.stem}", f"Text: {rel}",
                             markdown_to_html(md.read_text(encoding="utf-8"), level_shift=2)))
    figs = []
    for png in _files(run_dir, {".png", ".gif"}):
        rel = png.relative_to(run_dir).as_posix()
        cap = _captions(png.parent).get(png.name)
        cap_html = (markdown_to_html(cap) if cap else
                    f'<p class="note">{html.escape(rel)} (no caption written)</p>')
        alt = html.escape(rel)
        figs.append(f'<figure><img src="{html.escape(rel)}" alt="{alt}">'
                    f"<figcaption><strong>{html.escape(rel)}</strong>{cap_html}</figcaption>"
                    "</figure>")
    if figs:
        sections.append(("figures", "Figures", "\n".join(figs)))
    movies = []
    for mp4 in _files(run_dir, {".mp4"}):
        rel = mp4.relative_to(run_dir).as_posix()
        cap = _captions(mp4.parent).get(mp4.name) or (
            "Movie of the spin field written by thinfilm movie; colour key and frame labels are "
            "drawn in the frames.")
        movies.append(f'<figure><video controls preload="metadata" src="{html.escape(rel)}">'
                      f'<a href="{html.escape(rel)}">{html.escape(rel)}</a></video>'
                      f"<figcaption><strong>{html.escape(rel)}</strong>"
                      f"{markdown_to_html(cap)}</figcaption></figure>")
    if movies:
        sections.append(("movies", "Movies", "\n".join(movies)))
    tables = []
    for c in _files(run_dir, {".csv"}):
        rel = c.relative_to(run_dir).as_posix()
        tables.append(f"<h3>{html.escape(rel)}</h3>" + _table_html(c, rel))
    if tables:
        sections.append(("tables", "Tables", "\n".join(tables)))
    for ident, title, body in sections:
        toc.append(f'<a href="#{ident}">{html.escape(title)}</a>')
        parts.append(f'<section id="{ident}"><h2>{html.escape(title)}</h2>{body}</section>')
    parts.insert(2, "<nav>" + " ".join(toc) + "</nav>")
    page = ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>thinfilm: {html.escape(str(name))}</title><style>{STYLE}</style></head>"
            "<body>\n" + "\n".join(parts) + "\n</body></html>\n")
    return atomic_write_text(out, page)
