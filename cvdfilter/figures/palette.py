"""Series palette: colour plus line style plus marker.

Colours are the eight of Okabe & Ito's Color Universal Design palette
(Okabe M., Ito K. 2008, "Color Universal Design (CUD): how to make figures and
presentations that are friendly to colorblind people", https://jfly.uni-koeln.de/color/;
also recommended by Wong B. 2011, "Points of view: Color blindness",
Nature Methods 8, 441). They were chosen to stay apart for protan, deutan and
tritan viewers; because the figures are about exactly these observers, every
series also gets its own line style and marker, so no series is told apart by
colour alone (and a greyscale print still works).

The order puts the darkest, most separable colours first and yellow, which
has little contrast on white, last.

Public: :data:`OKABE_ITO`, :data:`SERIES`, :func:`series`, :data:`CONE_STYLE`,
:data:`NEUTRAL`.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["OKABE_ITO", "SERIES", "SeriesStyle", "series", "CONE_STYLE", "NEUTRAL", "PALETTE_SOURCE"]

PALETTE_SOURCE = ("Okabe & Ito (2008) Color Universal Design, https://jfly.uni-koeln.de/color/ "
                  "(Wong 2011, Nature Methods 8, 441)")

#: The eight Okabe & Ito colours (hex sRGB, as published).
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky blue": "#56B4E9",
    "bluish green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish purple": "#CC79A7",
}

#: Neutral greys for backgrounds (illuminant fill, reference lines, confusion lines).
NEUTRAL = {"fill": "#BBBBBB", "line": "#777777", "light": "#DDDDDD", "text": "#333333"}


@dataclass(frozen=True)
class SeriesStyle:
    """How one series is drawn: ``color`` (hex), ``linestyle``, ``marker``, ``name`` of the colour."""

    color: str
    linestyle: object
    marker: str
    name: str
    filled: bool = True

    def line_kwargs(self) -> dict:
        """Keyword arguments for ``Axes.plot``."""
        kw = {"color": self.color, "linestyle": self.linestyle, "marker": self.marker}
        if not self.filled:
            kw["markerfacecolor"] = "white"
        return kw

    def marker_kwargs(self) -> dict:
        """Keyword arguments for a marker-only ``Axes.plot``."""
        kw = {"color": self.color, "linestyle": "none", "marker": self.marker}
        if not self.filled:
            kw["markerfacecolor"] = "white"
        return kw


_ORDER = ("blue", "vermillion", "bluish green", "reddish purple", "black", "orange", "sky blue", "yellow")
_LINESTYLES = ("-", (0, (4, 1.5)), (0, (1, 1.2)), (0, (5, 1.5, 1, 1.5)), (0, (2.5, 1.2)),
               (0, (6, 1.5, 1, 1.5, 1, 1.5)), (0, (8, 2)), (0, (3, 1, 1, 1, 1, 1)))
_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")

#: The series styles, in order of use.
SERIES = tuple(SeriesStyle(OKABE_ITO[c], ls, m, c) for c, ls, m in zip(_ORDER, _LINESTYLES, _MARKERS))

#: Cone fundamentals: L vermillion solid, M bluish green dashed, S blue dotted
#: (colour, style and marker all differ; markers used sparsely along the curve).
CONE_STYLE = {
    0: SeriesStyle(OKABE_ITO["vermillion"], "-", "o", "vermillion"),
    1: SeriesStyle(OKABE_ITO["bluish green"], (0, (4, 1.5)), "s", "bluish green"),
    2: SeriesStyle(OKABE_ITO["blue"], (0, (1, 1.2)), "^", "blue"),
}


def series(n: int) -> list[SeriesStyle]:
    """Styles for ``n`` series (at most 16: after 8 the markers are drawn open).

    Examples
    --------
    >>> [s.name for s in series(3)]
    ['blue', 'vermillion', 'bluish green']
    """
    if n > 2 * len(SERIES):
        from ..errors import InputError

        raise InputError(f"{n} series in one figure are too many to tell apart",
                         hint=f"at most {2 * len(SERIES)}; split the figure")
    out = list(SERIES[:n])
    for i in range(len(SERIES), n):
        base = SERIES[i - len(SERIES)]
        # Second round: open markers and the next line style, so the pair differs twice.
        out.append(SeriesStyle(base.color, _LINESTYLES[(i + 1) % len(_LINESTYLES)], base.marker, base.name, False))
    return out
