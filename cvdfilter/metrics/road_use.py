"""Road use: ISO 12312-1 categories, the 0.2 x rule, signal quotients and night use.

What the scorecard checks, as the College of Optometrists' guidance "Tints and
driving" summarises ISO 12312-1:2013 (the standard's own text and tables
govern; local traffic rules and a licensed eye-care practitioner decide):

* Category from the luminous transmittance tau_v (CIE D65, CIE 1931 2 deg
  V(lambda)): 0 over 80 to 100 %, 1 over 43 to 80 %, 2 over 18 to 43 %,
  3 over 8 to 18 %, 4 over 3 to 8 %; at or below 3 % the filter is outside the
  categories. Category 4 (and anything outside) is not for road use.
* Spectral transmittance not below 0.2 x tau_v anywhere from 475 to 650 nm.
* Signal quotients Q = tau_signal / tau_v, where tau_signal is the filter's
  luminous transmittance for the light of a signal lamp (the lamp's spectrum
  weighted by V(lambda)), at or above 0.8 for red and yellow, 0.6 for green
  and 0.6 (or 0.4, another reading) for blue.
* Twilight and night driving: tau_v at least 75 % (here also requiring the
  daytime checks to pass).

The standard's signal-light spectra are not available here. This module
models them (:func:`modelled_signal_lights`): incandescent signals as CIE
illuminant A through a coloured glass, and LED signals with typical peak
wavelengths. These models are an approximation, from memory; users can pass
measured signal spectra instead, and every output says which were used. For
each colour the quotient reported is the lowest over that colour's lights.

Signal-quotient limits are a named table (:data:`SIGNAL_LIMIT_READINGS`): two
readings of the standard circulate and disagree on blue (0.6 or 0.4). The
default is :data:`DEFAULT_SIGNAL_READING`; :func:`parse_signal_limits` takes
another reading or explicit limits, and every function that judges road use
takes ``limits=``.

Public: :data:`CATEGORY_BANDS`, :data:`SIGNAL_LIMITS`, :data:`SIGNAL_LIMIT_READINGS`,
:data:`SIGNAL_LIMIT_SOURCES`, :data:`DEFAULT_SIGNAL_READING`, :func:`parse_signal_limits`,
:func:`describe_signal_limits`, :data:`SIGNAL_COLOURS`,
:data:`RATIO_BAND_NM`, :data:`RATIO_LIMIT`, :data:`NIGHT_MIN`, :class:`SignalLight`,
:func:`iso12312_category`, :func:`category_text`, :func:`min_ratio_in_band`,
:func:`modelled_signal_lights`, :func:`signal_colour`, :func:`signal_quotients`,
:func:`road_use_flags`, :func:`road_use_reasons`, :func:`road_use_reasons_many`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

__all__ = ["CATEGORY_BANDS", "SIGNAL_LIMITS", "SIGNAL_LIMIT_READINGS", "SIGNAL_LIMIT_SOURCES",
           "DEFAULT_SIGNAL_READING", "parse_signal_limits", "describe_signal_limits", "SIGNAL_COLOURS",
           "RATIO_BAND_NM", "RATIO_LIMIT", "NIGHT_MIN", "MODEL_NOTE", "SignalLight", "iso12312_category",
           "category_text", "min_ratio_in_band", "modelled_signal_lights", "signal_colour", "signal_quotients",
           "road_use_flags", "road_use_reasons", "road_use_reasons_many"]

#: ISO 12312-1:2013 luminous transmittance categories as (category, lower, upper) fractions:
#: lower exclusive, upper inclusive (College of Optometrists, "Tints and driving").
CATEGORY_BANDS = ((0, 0.80, 1.00), (1, 0.43, 0.80), (2, 0.18, 0.43), (3, 0.08, 0.18), (4, 0.03, 0.08))
#: Two readings of ISO 12312-1:2013's minimum signal quotients (the standard's own table was not at hand;
#: docs/metrics.md, "Signal-quotient limits", records both and why the default is the default).
#: ``guidance``: the College of Optometrists' guidance "Tints and driving", which reads "not less than 0.8
#: for red and yellow signal lights, not less than 0.6 for yellow, green and blue signal lights" (yellow
#: appears twice, so the sentence is garbled; red and yellow 0.8 and green and blue 0.6 is its plain reading).
#: ``blue-0.4``: red 0.8, yellow 0.8, green 0.6, blue 0.4 (from memory; not checked against the standard).
SIGNAL_LIMIT_READINGS = {
    "guidance": {"red": 0.8, "yellow": 0.8, "green": 0.6, "blue": 0.6},
    "blue-0.4": {"red": 0.8, "yellow": 0.8, "green": 0.6, "blue": 0.4},
}
#: Where each reading comes from (printed with the limits).
SIGNAL_LIMIT_SOURCES = {
    "guidance": "ISO 12312-1:2013 as summarised by the College of Optometrists' guidance 'Tints and driving' "
                "(that sentence is garbled on yellow; plain reading)",
    "blue-0.4": "ISO 12312-1:2013, another reading, from memory (not checked against the standard)",
}
#: The reading used unless the user gives other limits: the only one with a public source at hand, and the
#: stricter (it never passes a filter the other reading fails).
DEFAULT_SIGNAL_READING = "guidance"
#: Minimum signal quotients by colour: the default reading (the standard's tables govern).
SIGNAL_LIMITS = dict(SIGNAL_LIMIT_READINGS[DEFAULT_SIGNAL_READING])
SIGNAL_COLOURS = tuple(SIGNAL_LIMITS)
#: Band (nm) where spectral transmittance must stay at or above RATIO_LIMIT x tau_v (same source).
RATIO_BAND_NM = (475.0, 650.0)
RATIO_LIMIT = 0.2
#: Minimum luminous transmittance for twilight and night driving (same source).
NIGHT_MIN = 0.75
#: The label every modelled signal spectrum carries.
MODEL_NOTE = "approximation, from memory"

#: Modelled incandescent signal glasses: CIE illuminant A through logistic edges
#: (edge nm at 50 %, 10-90 % width nm). Approximation, from memory.
_GLASSES = {
    "red": [("longpass", 605.0, 30.0)],
    "yellow": [("longpass", 550.0, 30.0)],
    "green": [("longpass", 470.0, 30.0), ("shortpass", 560.0, 40.0)],
    "blue": [("shortpass", 490.0, 40.0)],
}
#: Modelled LED signals: Gaussian spectra (peak nm, FWHM nm). Approximation, from memory:
#: AlInGaP red and amber, InGaN blue-green and blue emitters typical of traffic signals.
_LEDS = {"red": (630.0, 18.0), "yellow": (590.0, 15.0), "green": (505.0, 30.0), "blue": (470.0, 25.0)}
_COLOUR_WORDS = {"red": "red", "yellow": "yellow", "amber": "yellow", "green": "green", "blue": "blue"}


@dataclass(frozen=True)
class SignalLight:
    """A signal lamp's spectrum on the grid.

    Attributes
    ----------
    name : str
        e.g. ``red-incandescent``, ``green-led`` or a measured column name.
    colour : str
        ``red``, ``yellow``, ``green`` or ``blue``.
    spd : numpy.ndarray
        Relative spectral power, shape (n_wl,).
    kind : str
        ``modelled`` or ``measured``.
    source : str
        :data:`MODEL_NOTE` for modelled lights, the file for measured ones.
    """

    name: str
    colour: str
    spd: np.ndarray
    kind: str
    source: str

    def describe(self) -> dict:
        return {"name": self.name, "colour": self.colour, "kind": self.kind, "source": self.source}


def iso12312_category(tau_v) -> np.ndarray:
    """ISO 12312-1 category of each luminous transmittance; -1 at or below 3 % (outside).

    Transmittances are compared after rounding to 1e-9, so that a filter of
    exactly 80 % is not pushed across a band edge by floating-point noise.

    Parameters
    ----------
    tau_v : array_like
        Luminous transmittance, fraction 0-1.

    Returns
    -------
    numpy.ndarray
        int, same shape: 0-4, or -1 for outside the categories.

    Examples
    --------
    >>> iso12312_category([1.0, 0.8, 0.80001, 0.43, 0.18, 0.08, 0.0301, 0.03, 0.0]).tolist()
    [0, 1, 0, 2, 3, 4, 4, -1, -1]
    """
    t = np.round(np.asarray(tau_v, dtype=float), 9)
    cat = np.full(t.shape, -1, dtype=int)
    for c, lo, hi in CATEGORY_BANDS:
        cat = np.where((t > lo) & (t <= hi), c, cat)
    return cat


def category_text(category: int) -> str:
    """The band of a category in words, e.g. ``over 43 to 80 %``."""
    for c, lo, hi in CATEGORY_BANDS:
        if c == category:
            return f"over {100 * lo:g} to {100 * hi:g} %"
    return f"at or below {100 * CATEGORY_BANDS[-1][1]:g} %, outside the categories"


def min_ratio_in_band(transmittance, tau_v, wavelengths, band=RATIO_BAND_NM):
    """Lowest spectral transmittance in ``band`` divided by tau_v, and where it occurs.

    Parameters
    ----------
    transmittance : array_like
        Shape (n_filters, n_wl).
    tau_v : array_like
        Shape (n_filters,).
    wavelengths : array_like
        nm, shape (n_wl,).
    band : (float, float)
        nm, inclusive.

    Returns
    -------
    ratio : numpy.ndarray
        Shape (n_filters,); NaN when tau_v is 0.
    at_nm : numpy.ndarray
        Shape (n_filters,), the wavelength of the lowest value.

    Examples
    --------
    >>> wl = np.arange(380.0, 781.0)
    >>> r, at = min_ratio_in_band(np.where(wl == 575, 0.05, 0.9)[None], [0.9], wl)
    >>> round(float(r[0]), 4), float(at[0])
    (0.0556, 575.0)
    """
    t = np.atleast_2d(np.asarray(transmittance, dtype=float))
    wl = np.asarray(wavelengths, dtype=float)
    inside = np.nonzero((wl >= band[0]) & (wl <= band[1]))[0]
    sub = t[:, inside[0]:inside[-1] + 1]  # the grid is sorted: a slice, not a copy
    idx = np.argmin(sub, axis=1)
    low = np.take_along_axis(sub, idx[:, None], axis=1)[:, 0]
    tau = np.asarray(tau_v, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(tau > 0, low / tau, np.nan)
    return ratio, wl[inside[0] + idx]


def _gaussian(wl, peak, fwhm):
    return np.exp(-4.0 * np.log(2.0) * (wl - peak) ** 2 / fwhm ** 2)


def modelled_signal_lights(wavelengths, incandescent_spd) -> list[SignalLight]:
    """The modelled signal lights: incandescent (A through glass) and LED, per colour.

    Parameters
    ----------
    wavelengths : array_like
        nm, shape (n_wl,).
    incandescent_spd : array_like
        CIE illuminant A on the same grid, shape (n_wl,).

    Returns
    -------
    list of SignalLight
        Eight lights, each labelled :data:`MODEL_NOTE`.
    """
    from ..spectra.filters import longpass, shortpass

    wl = np.asarray(wavelengths, dtype=float)
    a = np.asarray(incandescent_spd, dtype=float)
    lights = []
    for colour in SIGNAL_COLOURS:
        glass = np.ones_like(wl)
        for kind, edge, width in _GLASSES[colour]:
            glass = glass * (longpass if kind == "longpass" else shortpass)(wl, edge, width)
        lights.append(SignalLight(f"{colour}-incandescent", colour, a * glass, "modelled", MODEL_NOTE))
        peak, fwhm = _LEDS[colour]
        lights.append(SignalLight(f"{colour}-led", colour, _gaussian(wl, peak, fwhm), "modelled", MODEL_NOTE))
    return lights


def signal_colour(name: str) -> str:
    """The signal colour a measured spectrum's name starts with (``amber`` counts as yellow).

    >>> signal_colour("Amber LED, 2019")
    'yellow'

    Raises
    ------
    ValueError
        When the name does not start with red, yellow, amber, green or blue.
    """
    m = re.match(r"\s*([A-Za-z]+)", str(name))
    word = m.group(1).lower() if m else ""
    if word not in _COLOUR_WORDS:
        raise ValueError(f"signal spectrum '{name}' must be named starting with red, yellow, amber, green or blue")
    return _COLOUR_WORDS[word]


def signal_quotients(transmittance, tau_v, lights, v_lambda):
    """Signal quotients Q = tau_signal / tau_v per colour (lowest over that colour's lights).

    Parameters
    ----------
    transmittance : array_like
        Shape (n_filters, n_wl).
    tau_v : array_like
        Luminous transmittance (D65), shape (n_filters,).
    lights : list of SignalLight
    v_lambda : array_like
        CIE 1931 2 deg V(lambda), shape (n_wl,).

    Returns
    -------
    by_colour : dict
        colour -> numpy.ndarray (n_filters,) (NaN when tau_v is 0).
    by_light : dict
        light name -> numpy.ndarray (n_filters,).
    """
    t = np.atleast_2d(np.asarray(transmittance, dtype=float))
    v = np.asarray(v_lambda, dtype=float)
    weights = np.stack([l.spd * v for l in lights], axis=1)  # (n_wl, n_lights)
    tau_signal = (t @ weights) / weights.sum(axis=0)
    tau = np.asarray(tau_v, dtype=float)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.where(tau > 0, tau_signal / tau, np.nan)
    by_light = {l.name: q[:, k] for k, l in enumerate(lights)}
    by_colour = {}
    for colour in SIGNAL_COLOURS:
        cols = [k for k, l in enumerate(lights) if l.colour == colour]
        if cols:
            by_colour[colour] = np.min(q[:, cols], axis=1)
    return by_colour, by_light


def parse_signal_limits(limits=None) -> tuple[dict, str]:
    """Signal-quotient limits from a reading name, a ``colour=value,...`` text or a dict.

    Parameters
    ----------
    limits : None, str or dict
        None: the default reading; a key of :data:`SIGNAL_LIMIT_READINGS`;
        ``red=0.8,yellow=0.8,green=0.6,blue=0.4`` (colours left out keep the
        default reading's limit); or a dict colour -> limit.

    Returns
    -------
    limits : dict
        colour -> limit, for every colour of :data:`SIGNAL_COLOURS`.
    reading : str
        The reading's name, or ``user`` for limits that match no reading.

    Raises
    ------
    ValueError
        For an unknown colour or reading, or a limit outside 0-2.

    Examples
    --------
    >>> parse_signal_limits("blue=0.4")
    ({'red': 0.8, 'yellow': 0.8, 'green': 0.6, 'blue': 0.4}, 'blue-0.4')
    >>> parse_signal_limits()[1]
    'guidance'
    """
    base = dict(SIGNAL_LIMIT_READINGS[DEFAULT_SIGNAL_READING])
    if limits is None:
        return base, DEFAULT_SIGNAL_READING
    if isinstance(limits, str):
        text = limits.strip()
        if text in SIGNAL_LIMIT_READINGS:
            return dict(SIGNAL_LIMIT_READINGS[text]), text
        items = {}
        for part in (p for p in text.split(",") if p.strip()):
            if "=" not in part:
                raise ValueError(f"signal limits '{limits}': expected colour=value pairs or one of "
                                 f"{', '.join(SIGNAL_LIMIT_READINGS)}")
            k, v = part.split("=", 1)
            try:
                items[k.strip().lower()] = float(v)
            except ValueError:
                raise ValueError(f"signal limits '{limits}': '{v.strip()}' is not a number") from None
        limits = items
    out = base
    for k, v in dict(limits).items():
        colour = _COLOUR_WORDS.get(str(k).strip().lower())
        if colour is None:
            raise ValueError(f"signal limits: unknown colour '{k}' (use red, yellow, green, blue)")
        v = float(v)
        if not 0.0 <= v <= 2.0:
            raise ValueError(f"signal limits: {colour}={v:g} is outside 0-2")
        out[colour] = v
    reading = next((name for name, table in SIGNAL_LIMIT_READINGS.items() if table == out), "user")
    return out, reading


def describe_signal_limits(limits: dict, reading: str) -> str:
    """One line naming the limits and where they come from.

    >>> describe_signal_limits(*parse_signal_limits()).split(" (")[0]
    'Signal-quotient limits: red 0.8, yellow 0.8, green 0.6, blue 0.6'
    """
    values = ", ".join(f"{c} {limits[c]:g}" for c in SIGNAL_COLOURS)
    source = SIGNAL_LIMIT_SOURCES.get(reading, "given by the user")
    return f"Signal-quotient limits: {values} (reading '{reading}': {source})."


def road_use_flags(category, min_ratio, quotients: dict, tau_v, limits: dict | None = None):
    """``suitable`` and ``night_suitable`` for each filter (boolean arrays).

    suitable: category 0-3, min ratio >= 0.2 and every signal quotient at or
    above its limit (``limits``, default :data:`SIGNAL_LIMITS`); night_suitable:
    suitable and tau_v >= 0.75.
    """
    limits = SIGNAL_LIMITS if limits is None else limits
    category = np.asarray(category)
    ok = (category >= 0) & (category <= 3)
    with np.errstate(invalid="ignore"):
        ok &= np.nan_to_num(np.asarray(min_ratio, dtype=float), nan=-1.0) >= RATIO_LIMIT
        for colour, q in quotients.items():
            ok &= np.nan_to_num(np.asarray(q, dtype=float), nan=-1.0) >= limits[colour]
    night = ok & (np.round(np.asarray(tau_v, dtype=float), 9) >= NIGHT_MIN)
    return ok, night


from .road_use_text import road_use_reasons, road_use_reasons_many  # noqa: E402 - the sentences, re-exported
