"""A drawn figure as file bytes: PNG through one Agg draw, other formats through savefig.

Before drawing, the labels of logarithmic axes are made plain text (``10¹⁵``, ``2×10¹⁵``
in Unicode superscripts) instead of matplotlib's default mathtext (``$10^{15}$``): every
figure is drawn on a new canvas, whose mathtext parser starts with an empty cache, and each
label parsed cost about 7 ms, a third of a log-axis figure's time. And a title over axes
with nothing above them is pinned to the top of the axes (where matplotlib would put it):
matplotlib otherwise measures the y-axis tick labels again at every draw to look for an
offset text in its way, about 20 ms a titled figure.
"""

from __future__ import annotations

import io
import re

from matplotlib.figure import Figure
from matplotlib.ticker import LogFormatterSciNotation, ScalarFormatter

_SUPERSCRIPT = str.maketrans("-0123456789", "\u207b\u2070\u00b9\u00b2\u00b3\u2074\u2075"
                                            "\u2076\u2077\u2078\u2079")
_MATHDEFAULT = re.compile(r"\$\\mathdefault\{(.*)\}\$")
_POWER = re.compile(r"\^\{(-?\d+)\}")


def plain_power(label: str) -> str:
    r"""A log-axis label of matplotlib's mathtext form as plain text; other labels as given.

    ``$\mathdefault{10^{-3}}$`` -> ``10⁻³``; ``$\mathdefault{2\times10^{15}}$`` ->
    ``2×10¹⁵``.
    """
    m = _MATHDEFAULT.fullmatch(label)
    if m is None:
        return label
    body = m.group(1).replace("\\times", "\u00d7")
    return _POWER.sub(lambda g: g.group(1).translate(_SUPERSCRIPT), body)


def power_of_ten(k: int) -> str:
    """``10`` to the power ``k`` in Unicode superscripts: ``10¹⁵``, ``10⁻³``."""
    return "10" + str(int(k)).translate(_SUPERSCRIPT)


class PlainLogFormatter(LogFormatterSciNotation):
    """matplotlib's log-axis labels (which ticks, which numbers), written as plain text."""

    def __call__(self, x, pos=None) -> str:
        """The label of tick value ``x``, as the default formatter chooses it, plain."""
        return plain_power(super().__call__(x, pos))


def plain_log_labels(fig: Figure) -> None:
    """Swap every default log-axis formatter of ``fig`` for :class:`PlainLogFormatter`."""
    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            for get, put in ((axis.get_major_formatter, axis.set_major_formatter),
                             (axis.get_minor_formatter, axis.set_minor_formatter)):
                old = get()
                if type(old) is LogFormatterSciNotation:
                    new = PlainLogFormatter()
                    new.__dict__.update(old.__dict__)  # its base, thresholds and axis
                    put(new)


def _nothing_above(ax) -> bool:
    """True when no tick, label, child axes or y offset text of ``ax`` sits above the axes."""
    if ax.child_axes or ax.xaxis.get_ticks_position() != "bottom" \
            or ax.xaxis.get_label_position() != "bottom":
        return False
    fmt = ax.yaxis.get_major_formatter()
    if isinstance(fmt, ScalarFormatter):
        # the offset text ("1e15") the formatter will show over the y axis, if any
        fmt.set_locs(ax.yaxis.get_majorticklocs())
        return not fmt.get_offset()
    return True


def pinned_titles(fig: Figure) -> None:
    """Pin the titles of axes with nothing above them to the top of the axes.

    The place is the one matplotlib's automatic placement finds there (the images are the
    same, ``tests/test_figures_layout.py``); it only skips the search.
    """
    for ax in fig.axes:
        titles = (ax.title, ax._left_title, ax._right_title)
        if any(t.get_text() for t in titles) and ax._autotitlepos is not False \
                and _nothing_above(ax):
            for t in titles:
                t.set_y(1.0)
            ax._autotitlepos = False


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
    plain_log_labels(fig)
    pinned_titles(fig)
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
