"""Figure captions: ``captions.md`` next to the figures, one ``## <file>`` section per PNG.

The axis labels are short (symbol and unit); the captions say what each quantity is.
"""

from pathlib import Path

from thinfilm._io import atomic_write_text

__all__ = ["write_captions", "definition_list"]

HEADER = ("# Figure captions\n\n"
          "Written by thinfilm next to the figures: one section per PNG file, the quantities on "
          "each axis with their units and definitions.\n")


def _read_sections(path):
    sections, current = {}, None
    for line in path.read_text(encoding="utf-8").splitlines():
        if line.startswith("## "):
            current = line[3:].strip()
            sections[current] = []
        elif current is not None:
            sections[current].append(line)
    return {name: "\n".join(lines).strip() for name, lines in sections.items()}


def write_captions(folder, captions):
    """Add or replace the sections ``{png file name: caption markdown}`` of
    ``folder/captions.md`` (written atomically; sections of other figures are kept)."""
    path = Path(folder) / "captions.md"
    sections = _read_sections(path) if path.is_file() else {}
    sections.update(captions)
    body = "".join(f"\n## {name}\n\n{text.strip()}\n" for name, text in sections.items())
    return atomic_write_text(path, HEADER + body)


def definition_list(items):
    """Markdown list "- **symbol** (unit): definition" of ``[(symbol, unit, definition)]``."""
    return "\n".join(f"- **{sym}** ({unit}): {text}" if text else f"- **{sym}** ({unit})"
                     for sym, unit, text in items)
