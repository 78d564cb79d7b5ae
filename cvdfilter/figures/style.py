"""Figure style: fonts, sizes and widths that a lab can set to match its journal.

A :class:`Style` holds the few numbers every figure uses (font family and
sizes in points, line width, marker size). :func:`parse_style` builds one from
option strings and style files; any matplotlib rcParam may be given as well,
so a lab's existing ``.mplstyle`` file works as a style file.

Widths follow the common journal column widths: ``single`` is 89 mm and
``double`` 183 mm (the column widths in Nature's and many other journals'
figure guidelines; from memory), or any width in mm.

Style file (``--style FILE``), one ``key: value`` or ``key = value`` a line,
``#`` starts a comment::

    font: Arial
    font_size: 8
    axes.linewidth: 0.8

Option set (``--style KEY=VALUE[,KEY=VALUE]``): the same keys.

Public: :class:`Style`, :func:`parse_style`, :func:`width_mm`, :data:`STYLE_KEYS`,
:data:`WIDTHS_MM`, :data:`MIN_TEXT_PT`.
"""

from __future__ import annotations

import dataclasses
import pathlib
from collections.abc import Iterable

from ..errors import InputError

__all__ = ["Style", "parse_style", "width_mm", "STYLE_KEYS", "WIDTHS_MM", "MIN_TEXT_PT", "MM_PER_INCH"]

#: Column widths in mm (journal figure guidelines, e.g. Nature's 89 mm and
#: 183 mm; from memory).
WIDTHS_MM = {"single": 89.0, "double": 183.0}

#: Smallest text size accepted, in points: journals ask for 5-7 pt at final
#: size (common practice); below 6 pt text is refused, so nothing prints smaller.
MIN_TEXT_PT = 6.0

MM_PER_INCH = 25.4


@dataclasses.dataclass(frozen=True)
class Style:
    """Fonts and sizes for every figure.

    Attributes
    ----------
    font : str
        Font family. The default, DejaVu Sans, ships with matplotlib, so a
        figure looks (and its files hash) the same on every machine.
    font_size : float
        Axis labels, legends and annotations, pt.
    tick_size : float
        Tick labels, pt.
    title_size : float
        The figure title, pt.
    caveat_size : float
        The caveat footnote, pt.
    line_width : float
        Data lines, pt.
    marker_size : float
        Markers, pt.
    axes_line_width : float
        Axes frame and ticks, pt.
    rc : tuple of (str, object)
        Further matplotlib rcParams, validated by matplotlib.
    """

    font: str = "DejaVu Sans"
    font_size: float = 7.0
    tick_size: float = 6.5
    title_size: float = 7.5
    caveat_size: float = 6.0
    line_width: float = 1.0
    marker_size: float = 3.5
    axes_line_width: float = 0.6
    rc: tuple = ()

    def rc_params(self) -> dict:
        """The matplotlib rcParams of this style (deterministic output settings included)."""
        params = {
            "font.family": "sans-serif" if self.font == "DejaVu Sans" else self.font,
            "font.sans-serif": ["DejaVu Sans"],
            "font.size": self.font_size,
            "axes.labelsize": self.font_size,
            "axes.titlesize": self.font_size,
            "axes.linewidth": self.axes_line_width,
            "xtick.labelsize": self.tick_size,
            "ytick.labelsize": self.tick_size,
            "xtick.major.width": self.axes_line_width,
            "ytick.major.width": self.axes_line_width,
            "xtick.minor.width": self.axes_line_width * 0.75,
            "ytick.minor.width": self.axes_line_width * 0.75,
            "xtick.major.size": 2.5,
            "ytick.major.size": 2.5,
            "xtick.minor.size": 1.5,
            "ytick.minor.size": 1.5,
            "legend.fontsize": self.font_size,
            "legend.frameon": False,
            "legend.handlelength": 2.6,
            "lines.linewidth": self.line_width,
            "lines.markersize": self.marker_size,
            "axes.spines.top": False,
            "axes.spines.right": False,
            "figure.titlesize": self.title_size,
            "savefig.facecolor": "white",
            "figure.facecolor": "white",
            "image.interpolation": "nearest",
            # Deterministic, editable vector output.
            "svg.hashsalt": "cvdfilter",
            "svg.fonttype": "none",       # text stays text in SVG
            "pdf.fonttype": 42,           # TrueType fonts embedded in PDF
            "ps.fonttype": 42,
            "pdf.compression": 6,
            "path.simplify": False,       # plotted data stay exactly as computed
        }
        params.update(dict(self.rc))
        return params


_FLOAT_KEYS = {f.name for f in dataclasses.fields(Style)} - {"font", "rc"}
#: Our own style keys (anything else must be a matplotlib rcParam).
STYLE_KEYS = ("font", *sorted(_FLOAT_KEYS))
_TEXT_KEYS = ("font_size", "tick_size", "title_size", "caveat_size")


def width_mm(width) -> float:
    """Figure width in mm from ``single``, ``double`` or a number of mm (30-500).

    Examples
    --------
    >>> width_mm("single"), width_mm("double"), width_mm("120")
    (89.0, 183.0, 120.0)
    """
    if isinstance(width, str):
        key = width.strip().lower()
        if key in WIDTHS_MM:
            return WIDTHS_MM[key]
        try:
            value = float(key.removesuffix("mm"))
        except ValueError:
            raise InputError(f"--width {width} is not single, double or a width in mm",
                             hint="e.g. --width single, --width double or --width 120") from None
    else:
        value = float(width)
    if not 30.0 <= value <= 500.0:
        raise InputError(f"--width {value:g} mm is outside 30-500 mm")
    return value


def _font_available(name: str) -> bool:
    from matplotlib import font_manager

    try:
        font_manager.findfont(font_manager.FontProperties(family=name), fallback_to_default=False)
        return True
    except ValueError:
        return False


def _set(values: dict, rc: dict, key: str, value: str, source: str, line: int | None) -> None:
    import matplotlib

    norm = key.strip().replace("-", "_")
    value = value.strip().strip("'\"")
    if norm == "font":
        if not value:
            raise InputError("font needs a family name", source=source, line=line)
        if not _font_available(value):
            raise InputError(f"font '{value}' is not installed", source=source, line=line,
                             hint="install it or choose another; DejaVu Sans always works")
        values["font"] = value
    elif norm in _FLOAT_KEYS:
        try:
            number = float(value)
        except ValueError:
            raise InputError(f"{norm}={value} is not a number", source=source, line=line) from None
        if not 0.0 < number <= 72.0:
            raise InputError(f"{norm}={number:g} is outside 0-72 pt", source=source, line=line)
        if norm in _TEXT_KEYS and number < MIN_TEXT_PT:
            raise InputError(f"{norm}={number:g} pt is below {MIN_TEXT_PT:g} pt, too small to read in print",
                             source=source, line=line)
        values[norm] = number
    elif key.strip() in matplotlib.rcParams:
        key = key.strip()
        try:
            rc[key] = matplotlib.rcParams.validate[key](value)
        except (ValueError, TypeError) as exc:
            raise InputError(f"{key}: {exc}", source=source, line=line) from None
    else:
        raise InputError(f"unknown style key '{key.strip()}'", source=source, line=line,
                         hint=f"use {', '.join(STYLE_KEYS)} or a matplotlib rcParam such as axes.linewidth")


def _read_file(path: pathlib.Path, values: dict, rc: dict) -> None:
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read style file: {exc}", source=str(path)) from None
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        sep = ":" if ":" in line and ("=" not in line or line.index(":") < line.index("=")) else "="
        key, found, value = line.partition(sep)
        if not found or not key.strip():
            raise InputError(f"'{raw.strip()}' is not 'key: value'", source=str(path), line=number)
        _set(values, rc, key, value, str(path), number)


def parse_style(items: str | Style | dict | Iterable[str] | None = None) -> Style:
    """Build a :class:`Style` from style files, ``key=value`` option sets or a dict.

    Parameters
    ----------
    items
        None (the default style), a :class:`Style`, a dict of keys, or one or
        several strings, each a path to a style file or ``key=value[,key=value]``.
        Later items override earlier ones.

    Returns
    -------
    Style

    Raises
    ------
    cvdfilter.errors.InputError
        For an unreadable file, an unknown key, a bad value or text below 6 pt.

    Examples
    --------
    >>> parse_style("font_size=8,tick_size=7").font_size
    8.0
    """
    if isinstance(items, Style):
        return items
    if items is None:
        return Style()
    values: dict = {}
    rc: dict = {}
    if isinstance(items, dict):
        for key, value in items.items():
            _set(values, rc, str(key), str(value), "style", None)
        return Style(**values, rc=tuple(rc.items()))
    if isinstance(items, str):
        items = [items]
    for item in items:
        item = str(item).strip()
        path = pathlib.Path(item)
        if path.is_file():
            _read_file(path, values, rc)
            continue
        if "=" not in item:
            raise InputError("no such style file, and not key=value", source=item,
                             hint="give a style file or e.g. --style font_size=8")
        for part in filter(None, (p.strip() for p in item.split(","))):
            key, found, value = part.partition("=")
            if not found:
                raise InputError(f"'{part}' is not key=value", source=item)
            _set(values, rc, key, value, item, None)
    return Style(**values, rc=tuple(rc.items()))
