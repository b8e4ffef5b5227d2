"""What the printed outputs (PDF and Word) share: formulas drawn as images, image sizes, the
numbers of sections, and the fonts (DejaVu, shipped with matplotlib: every character the report
can hold, Greek included, with no system font needed)."""

from __future__ import annotations

import functools
import io
import struct
from pathlib import Path

from bayes.report.document import Report, Section

FORMULA_DPI = 300
TEXT_FONTS = {"regular": "DejaVuSans.ttf", "bold": "DejaVuSans-Bold.ttf",
              "italic": "DejaVuSans-Oblique.ttf", "serif": "DejaVuSerif.ttf",
              "serif-bold": "DejaVuSerif-Bold.ttf"}  # fmt: skip


def font_path(kind: str) -> Path:
    """The TrueType file of one of :data:`TEXT_FONTS` from matplotlib's own fonts."""
    import matplotlib

    return Path(matplotlib.get_data_path()) / "fonts" / "ttf" / TEXT_FONTS[kind]


@functools.lru_cache(maxsize=16)
def formula_png(tex: str, fontsize: float = 10.0) -> bytes:
    """A formula in matplotlib's mathtext, drawn black on white at :data:`FORMULA_DPI`."""
    from bayes.report.figures import report_style

    with report_style():
        import matplotlib.pyplot as plt

        fig = plt.figure(figsize=(0.01, 0.01))
        fig.text(0, 0, tex, fontsize=fontsize, parse_math=True)
        buffer = io.BytesIO()
        fig.savefig(buffer, format="png", dpi=FORMULA_DPI, bbox_inches="tight", pad_inches=0.03,
                    metadata={"Software": None})  # fmt: skip
        plt.close(fig)
    return buffer.getvalue()


def png_size(png: bytes) -> tuple[int, int]:
    """Width and height in pixels, read from the PNG header."""
    if png[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG image")
    return struct.unpack(">II", png[16:24])


def section_titles(report: Report) -> list[tuple[Section, str]]:
    """Each section with its heading as the other outputs show it ("4. The posterior")."""
    out, n = [], 0
    for section in report.sections:
        if section.numbered:
            n += 1
            out.append((section, f"{n}. {section.title}"))
        else:
            out.append((section, section.title))
    return out
