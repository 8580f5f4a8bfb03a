"""Colours for vigil's charts: the Okabe & Ito (2008) palette, told apart by readers with any
common colour-vision deficiency, and greys for night and twilight.

Coverage classes keep one colour in every chart (timeline, HTML tables, night charts).
"""

from __future__ import annotations

import io

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from vigil.export.files import write_atomic

BLACK = "#000000"
ORANGE = "#E69F00"
SKY_BLUE = "#56B4E9"
GREEN = "#009E73"
YELLOW = "#F0E442"
BLUE = "#0072B2"
VERMILLION = "#D55E00"
PURPLE = "#CC79A7"
SERIES = (BLUE, ORANGE, GREEN, VERMILLION, PURPLE, SKY_BLUE, YELLOW, BLACK)

COVERAGE = {"full": BLUE, "ingress": SKY_BLUE, "egress": GREEN, "partial": ORANGE, "none": "#BBBBBB"}
# Sky shading from day to night: lighter is brighter sky.
SKY = {"day": "#FFFFFF", "civil": "#EFEFEF", "nautical": "#E0E0E0", "astronomical": "#D0D0D0", "night": "#BDBDBD"}


def png_bytes(figure: Figure, dpi: int = 110) -> bytes:
    """The figure as PNG bytes without timestamp or software metadata (reruns are byte-identical).

    Example: ``png_bytes(Figure())[:8] == b"\\x89PNG\\r\\n\\x1a\\n"``.
    """
    FigureCanvasAgg(figure)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()


def save_png(figure: Figure, path, dpi: int = 110) -> None:
    """Write the figure as PNG atomically (see `png_bytes`)."""
    write_atomic(path, png_bytes(figure, dpi))
