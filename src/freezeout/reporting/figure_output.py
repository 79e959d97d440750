"""A drawn figure as file bytes: PNG through one Agg draw, other formats through savefig."""

from __future__ import annotations

import io

from matplotlib.figure import Figure

#: Resolution of every PNG figure. [dots per inch]
DPI = 130


def png_bytes(fig_or_ax, fmt: str = "png") -> bytes:
    """Render a Figure (or the Figure of an Axes) to PNG (or ``fmt``, e.g. SVG) bytes.

    A PNG is drawn once on an Agg canvas (the layout and the drawing share one renderer, so
    each text is measured once) and encoded at zlib level 3 instead of 6 (project choice,
    no source: a third less encoding time for files about 12 % larger, 271 -> 305 kB for
    the silicon sample's five); ``savefig`` adds a dry-run draw before the real one. Other
    formats go through ``savefig``.
    """
    fig = fig_or_ax if isinstance(fig_or_ax, Figure) else fig_or_ax.figure
    buf = io.BytesIO()
    if fmt != "png":
        fig.savefig(buf, format=fmt, dpi=DPI)
        return buf.getvalue()
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.image import imsave

    canvas = FigureCanvasAgg(fig)
    dpi = fig.dpi
    fig.dpi = DPI
    try:
        canvas.draw()
        imsave(buf, canvas.buffer_rgba(), format="png", origin="upper", dpi=DPI,
               pil_kwargs={"compress_level": 3})
    finally:
        fig.dpi = dpi
    return buf.getvalue()
