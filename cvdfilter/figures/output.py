"""Figure canvas, title, caveat footnote and deterministic files.

Every figure is a plain :class:`matplotlib.figure.Figure` (no pyplot, no global
backend change), laid out with matplotlib's constrained layout, and saved with
settings that make the files reproducible byte for byte: no creation date,
a fixed SVG hash salt (so clip-path ids do not change between runs), TrueType
fonts embedded in PDF (``pdf.fonttype 42``) and text kept as text in SVG
(``svg.fonttype none``).

Public: :class:`FigureResult`, :func:`new_figure`, :func:`finish`,
:func:`figure_bytes`, :func:`save_figure`, :data:`FORMATS`.
"""

from __future__ import annotations

import contextlib
import io
import os
import pathlib
import re
from collections.abc import Iterable
from dataclasses import dataclass, field

from .._version import __version__
from ..errors import InputError
from .style import MM_PER_INCH, Style

__all__ = ["FigureResult", "new_figure", "finish", "figure_bytes", "save_figure", "FORMATS", "style_context", "freeze_layout", "format_of"]

FORMATS = ("pdf", "svg", "png")
_CREATOR = f"cvdfilter {__version__} (matplotlib)"


@contextlib.contextmanager
def style_context(style: Style, **extra):
    """matplotlib rc_context with the style's parameters (and ``extra`` rcParams)."""
    import matplotlib

    params = style.rc_params()
    params.update(extra)
    with matplotlib.rc_context(params):
        yield


def new_figure(style: Style, width_mm: float, height_mm: float, *, compress: bool = False):
    """An empty Figure of the given size in mm, constrained layout, Agg canvas.

    ``compress`` closes the gaps between fixed-aspect axes (images).
    Call inside :func:`style_context`.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_mm / MM_PER_INCH, height_mm / MM_PER_INCH), dpi=72,
                 layout="compressed" if compress else "constrained")
    FigureCanvasAgg(fig)
    fig.get_layout_engine().set(w_pad=2 / 72, h_pad=2 / 72, wspace=0.04, hspace=0.04)
    return fig


def _wrap(text: str, width_mm: float, size_pt: float, *, weight: str = "normal") -> str:
    """Wrap to the figure width, measuring each line in the current font (2 % margin each side)."""
    import matplotlib

    from .labelling import wrap_to_width

    with matplotlib.rc_context({"font.weight": weight}):
        return wrap_to_width(text, 0.93 * width_mm / MM_PER_INCH * 72, size_pt)


def finish(fig, style: Style, *, title: str | None = None, caveat: str | None = None) -> None:
    """Add the title (small, left-aligned, caption-ready) and the caveat footnote."""
    width_mm = fig.get_figwidth() * MM_PER_INCH
    if caveat:
        # The caveat is the figure's "supxlabel": constrained layout keeps room for it under
        # everything else, figure legends included.
        text = _wrap(caveat, width_mm, style.caveat_size)
        fig.supxlabel(text, x=0.01, ha="left", va="bottom", fontsize=style.caveat_size, color="#333333",
                      gid="caveat", linespacing=1.15, multialignment="left")
    if title:
        fig.suptitle(_wrap(title, width_mm, style.title_size, weight="bold"), x=0.01, ha="left",
                     fontsize=style.title_size, fontweight="bold", multialignment="left")


def freeze_layout(fig) -> None:
    """Run the constrained layout once (at 72 dpi, the vector backends' unit) and fix it.

    Constrained layout starts each run from the current positions, so a
    figure saved as PNG at 300 dpi and then as SVG would differ in the last
    digits of its coordinates. Fixing the layout once makes every file of the
    figure depend only on its inputs.
    """
    if fig.get_layout_engine() is None:
        return
    fig.set_dpi(72)
    fig.draw_without_rendering()   # constrained layout iterates twice inside one draw
    fig.set_layout_engine("none")
    # Round the axes boxes to 1e-7 of the figure (far below a printed digit), so round-off in the
    # inputs (e.g. reference data computed afresh or read from the cache) cannot move them.
    for ax in fig.get_axes():
        box = ax.get_position(original=False)
        ax.set_position([round(float(v), 7) for v in box.bounds], which="both")


def _stable_svg_ids(svg: bytes) -> bytes:
    """Number the SVG's hashed ids (clip paths, markers, hatches) in order of appearance.

    matplotlib hashes an object's coordinates, printed at full precision and
    with their Python or numpy type, into its id; two runs that draw the same
    picture can then differ in ids alone. Sequential ids depend only on the
    drawing order.
    """
    text = svg.decode("utf-8")
    names = {"p": "clip", "m": "marker", "h": "hatch"}
    pattern = re.compile(r"(?<=url\(#)([pmh][0-9a-f]{10})(?=\))|(?<=id=\")([pmh][0-9a-f]{10})(?=\")"
                         r"|(?<=href=\"#)([pmh][0-9a-f]{10})(?=\")")
    order: dict[str, str] = {}
    counts: dict[str, int] = {}
    for m in pattern.finditer(text):
        key = m.group(0)
        if key not in order:
            counts[key[0]] = counts.get(key[0], 0) + 1
            order[key] = f"{names[key[0]]}{counts[key[0]]}"
    if not order:
        return svg
    return pattern.sub(lambda m: order[m.group(0)], text).encode("utf-8")


def _metadata(fmt: str) -> dict:
    if fmt == "pdf":
        return {"Creator": _CREATOR, "Producer": _CREATOR, "CreationDate": None, "ModDate": None}
    if fmt == "svg":
        return {"Creator": _CREATOR, "Date": None}
    return {"Software": _CREATOR}


def format_of(path: pathlib.Path, fmt: str | None) -> str:
    fmt = (fmt or path.suffix.lstrip(".")).lower()
    if fmt not in FORMATS:
        raise InputError(f"cannot tell the figure format from '{path.name}'", source=str(path),
                         hint="end the file name in .pdf, .svg or .png")
    return fmt


def figure_bytes(fig, fmt: str = "svg", *, style: Style | None = None, dpi: float = 300.0,
                 salt: str = "cvdfilter") -> bytes:
    """The figure as PDF, SVG or PNG bytes, the same bytes for the same figure.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    fmt : str
        ``pdf``, ``svg`` or ``png``.
    style : Style, optional
        The style the figure was drawn with (its rcParams apply while saving).
    dpi : float
        Resolution of PNG files and of raster images inside PDF/SVG, dots per inch.
    salt : str
        SVG hash salt; ids in the SVG derive from it (give each figure of one
        HTML page its own salt).
    """
    fmt = fmt.lower()
    if fmt not in FORMATS:
        raise InputError(f"unknown figure format '{fmt}'", hint="use pdf, svg or png")
    if not 20 <= dpi <= 2400:
        raise InputError(f"--dpi {dpi:g} is outside 20-2400")
    buf = io.BytesIO()
    with style_context(style or Style(), **{"svg.hashsalt": salt}):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata=_metadata(fmt))
    data = buf.getvalue()
    if fmt == "svg":
        data = _stable_svg_ids(data)
    return data


def save_figure(fig, path: str | os.PathLike, *, style: Style | None = None, dpi: float = 300.0,
                format: str | None = None, inputs: Iterable[str | os.PathLike] = ()) -> pathlib.Path:
    """Write the figure atomically to ``path`` (format from the suffix unless ``format`` is given)."""
    from ..io.atomic import write_bytes

    path = pathlib.Path(path)
    data = figure_bytes(fig, format_of(path, format), style=style, dpi=dpi)
    return write_bytes(path, data, inputs=inputs)


@dataclass
class FigureResult:
    """A figure and the numbers it shows.

    Attributes
    ----------
    kind : str
        The figure kind (``spectrum``, ``chromaticity``, ...).
    figure : matplotlib.figure.Figure
    data : dict
        The plotted data as arrays and lists (what the axes show, in their units).
    style : Style
    inputs : dict
        The inputs that produced it (filters, illuminant, observers, ...).
    """

    kind: str
    figure: object
    data: dict = field(default_factory=dict)
    style: Style = field(default_factory=Style)
    inputs: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        with style_context(self.style):
            freeze_layout(self.figure)

    def to_bytes(self, format: str = "svg", *, dpi: float = 300.0, salt: str = "cvdfilter") -> bytes:
        """PDF, SVG or PNG bytes (see :func:`figure_bytes`)."""
        return figure_bytes(self.figure, format, style=self.style, dpi=dpi, salt=salt)

    def save(self, path: str | os.PathLike, *, dpi: float = 300.0, format: str | None = None,
             inputs: Iterable[str | os.PathLike] = ()) -> pathlib.Path:
        """Write the figure atomically; the format follows the suffix (.pdf, .svg, .png)."""
        return save_figure(self.figure, path, style=self.style, dpi=dpi, format=format, inputs=inputs)

    def data_csv(self) -> str:
        """The plotted numbers as CSV text (:func:`cvdfilter.figures.data_export.data_csv`)."""
        from .data_export import data_csv

        return data_csv(self)

    def save_data(self, path: str | os.PathLike, *, inputs: Iterable[str | os.PathLike] = ()) -> pathlib.Path:
        """Write the plotted numbers as CSV, atomically (so a lab can re-plot them in its own style)."""
        from .data_export import save_data

        return save_data(self, path, inputs=inputs)

    def close(self) -> None:
        """Release the figure's memory (it is not registered with pyplot, so this only clears it)."""
        self.figure.clear()
