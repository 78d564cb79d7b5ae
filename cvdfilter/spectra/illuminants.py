"""Light sources on the grid.

Spec strings::

    D65, D50, A, E, FL1 ... FL12, LED-B1 ... (CIE illuminants shipped by colour-science)
    LPS, HPS, Mercury, "Metal Halide", ... (lamp spectra shipped by colour-science)
    daylight:cct=5500          CIE daylight at any correlated colour temperature (4000-25000 K)
    planck:t=2856              Planckian radiator at any temperature (K)
    PATH                       a measured SPD file (same reader and validation as filters)
    D65@0.7+A@0.3              a mixture; each part is scaled to equal luminance (CIE 1931
                               2 deg Y) and weighted, so the weights are luminance fractions

Public: :class:`Illuminant`, :class:`IlluminantKind`, :func:`illuminant`, :func:`illuminant_names`,
:data:`ILLUMINANT_KINDS`, :data:`CIE_ILLUMINANTS`, :data:`LAMPS`.
"""

from __future__ import annotations

import pathlib
import re
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .cache import cached_arrays, memo_arrays
from .grid import DEFAULT_GRID, Grid

__all__ = ["Illuminant", "IlluminantKind", "illuminant", "illuminant_names", "CIE_ILLUMINANTS", "LAMPS",
           "ILLUMINANT_KINDS"]

#: CIE illuminants offered by name (colour.SDS_ILLUMINANTS keys).
CIE_ILLUMINANTS = (["D50", "D55", "D65", "D75", "A", "E"] + [f"FL{i}" for i in range(1, 13)]
                   + ["LED-B1", "LED-B2", "LED-B3", "LED-B4", "LED-B5", "LED-BH1", "LED-RGB1", "LED-V1", "LED-V2"])
#: Lamp spectra offered by name (colour.SDS_LIGHT_SOURCES keys).
LAMPS = ["LPS", "HPS", "Super HPS", "Mercury", "Metal Halide", "Incandescent", "Cool White FL",
         "Daylight FL", "Triphosphor FL", "Phosphor LED YAG", "Neodimium Incandescent",
         "4-LED Yellow", "3-LED-1 (457/540/605)"]


@dataclass(frozen=True)
class Illuminant:
    """A light source on the grid.

    Attributes
    ----------
    name : str
        Canonical spec string.
    spd : numpy.ndarray
        Relative spectral power, shape (n_wl,); scaled so that its CIE 1931
        2 deg luminance Y equals 100.
    grid : Grid
    source : str
        Where it came from (``colour-science: CIE D65`` or a file path).
    """

    name: str
    spd: np.ndarray
    grid: Grid = DEFAULT_GRID
    source: str = ""


def illuminant_names() -> dict[str, list[str]]:
    """What ``cvdfilter list illuminants`` shows: the named tables, the parametric kinds, the mixture form."""
    return {"cie": list(CIE_ILLUMINANTS), "lamps": list(LAMPS),
            "parametric": [k.form for k in ILLUMINANT_KINDS.values()], "mixture": ["NAME@WEIGHT+NAME@WEIGHT"]}


def _lookup(name: str) -> tuple[str, str] | None:
    low = name.lower()
    for n in CIE_ILLUMINANTS:
        if n.lower() == low:
            return n, "cie"
    for n in LAMPS:
        if n.lower() == low:
            return n, "lamp"
    return None


def _named_spd(name: str, table: str, grid: Grid) -> np.ndarray:
    def build():
        import colour

        from .grid import resample

        sd = (colour.SDS_ILLUMINANTS if table == "cie" else colour.SDS_LIGHT_SOURCES)[name]
        # Linear interpolation: CIE 15 practice for the D illuminants, and safe
        # for line spectra (no ringing around mercury or sodium lines).
        return {"spd": np.clip(resample(sd.wavelengths, sd.values, grid, method="linear", outside="zero"), 0, None)}

    return cached_arrays(f"illuminant-{table}-{name}-{grid.key()}", build)["spd"]


def _daylight(cct: float, grid: Grid) -> np.ndarray:
    if not (4000 <= cct <= 25000):
        raise InputError(f"daylight CCT {cct:g} K is outside 4000-25000 K", source=f"daylight:cct={cct:g}")

    def build():
        import colour

        from .grid import resample

        xy = colour.temperature.CCT_to_xy_CIE_D(cct)
        sd = colour.sd_CIE_illuminant_D_series(xy)
        return {"spd": resample(sd.wavelengths, sd.values, grid, method="linear", outside="zero")}

    return memo_arrays(f"daylight-{cct:g}-{grid.key()}", build)["spd"]  # a user's parameter: not on disk


def _planck(t: float, grid: Grid) -> np.ndarray:
    if not (500 <= t <= 100000):
        raise InputError(f"temperature {t:g} K is outside 500-100000 K", source=f"planck:t={t:g}")

    def build():
        import colour

        sd = colour.sd_blackbody(t, grid.shape())
        return {"spd": np.asarray(sd.values, dtype=float)}

    return memo_arrays(f"planck-{t:g}-{grid.key()}", build)["spd"]  # a user's parameter: not on disk


@dataclass(frozen=True)
class IlluminantKind:
    """A parametric kind of light: ``NAME:KEY=VALUE`` with one number.

    Attributes
    ----------
    form : str
        As ``cvdfilter list illuminants`` shows it.
    canonical : str
        Format of the canonical name, ``{value:g}`` filled in.
    source : str
        Where the spectrum comes from.
    build : callable
        ``build(value, grid)`` -> relative spectral power (n_wl,); refuses a value out of range.
    """

    form: str
    canonical: str
    source: str
    build: Callable[[float, Grid], np.ndarray]


#: Every parametric kind of light, by the spec's kind word. The parser (:func:`illuminant`), ``list`` and the
#: docs read this mapping; a new kind is a builder and one entry here.
ILLUMINANT_KINDS = {
    "daylight": IlluminantKind("daylight:cct=K", "daylight:cct={value:g}", "colour-science: CIE daylight", _daylight),
    "planck": IlluminantKind("planck:t=K", "planck:t={value:g}", "colour-science: Planckian radiator", _planck),
}
#: Other spellings of the kind words, and the parameter keys every kind accepts.
_KIND_ALIASES = {"blackbody": "planck"}
_KIND_KEYS = ("cct", "t")


def _parametric(part: str) -> tuple[str, str] | None:
    """(kind, number text) if ``part`` has the form KIND:KEY=NUMBER of a registered kind, else None."""
    kinds = "|".join(re.escape(k) for k in (*ILLUMINANT_KINDS, *_KIND_ALIASES))
    m = re.fullmatch(rf"({kinds}):({'|'.join(_KIND_KEYS)})=([0-9.eE+-]+)", part, flags=re.I)
    if not m:
        return None
    kind = m.group(1).lower()
    return _KIND_ALIASES.get(kind, kind), m.group(3)


def _is_mixture(spec: str) -> bool:
    """Whether a spec has the mixture form: parts joined by '+', one of them at least a named or parametric
    light or carrying an @WEIGHT (so a file whose name holds '+' and names no light stays one file)."""
    if "+" not in spec:
        return False
    return any("@" in p or _lookup(p.strip()) or _parametric(p.strip()) for p in spec.split("+"))


def _luminance_Y(spd: np.ndarray, grid: Grid) -> float:
    from ..observers.fundamentals import cie1931_cmfs

    return float(spd @ cie1931_cmfs(grid)[:, 1])


def _normalised(spd: np.ndarray, grid: Grid, what: str) -> np.ndarray:
    y = _luminance_Y(spd, grid)
    if not y > 0:
        raise InputError("has no luminous power in 380-780 nm", source=what)
    return spd * (100.0 / y)


def _one(part: str, grid: Grid) -> tuple[str, np.ndarray, str]:
    part = part.strip()
    found = _lookup(part)
    if found:
        name, table = found
        src = f"colour-science: {'CIE illuminant' if table == 'cie' else 'lamp'} {name}"
        return name, _named_spd(name, table, grid), src
    found_kind = _parametric(part)
    if found_kind:
        kind_name, text = found_kind
        try:
            value = float(text)
        except ValueError:
            raise InputError(f"{text} is not a number", source=part) from None
        kind = ILLUMINANT_KINDS[kind_name]
        return kind.canonical.format(value=value), kind.build(value, grid), kind.source
    path = pathlib.Path(part)
    if path.exists():
        from ..io.spectra_files import read_spectra
        from .grid import resample

        spectra = read_spectra(path, kind="spd")
        if len(spectra.names) != 1:
            raise InputError(f"holds {len(spectra.names)} spectra; an illuminant file needs exactly one value column",
                             source=str(path))
        spd = resample(spectra.wavelengths, spectra.values[0], grid, method="linear", outside="zero")
        return str(path), spd, f"file {path}"
    from ..errors import clip_text, did_you_mean

    close = did_you_mean(part.partition(":")[0] if ":" in part else part,
                         [*CIE_ILLUMINANTS, *LAMPS, *ILLUMINANT_KINDS])
    raise InputError(f"unknown illuminant '{clip_text(part)}'" + (f"; {close}" if close else ""),
                     hint="try D65, A, FL2, LPS, daylight:cct=5000, planck:t=2856 or a file "
                          "(cvdfilter list illuminants)")


def illuminant(spec: str | Illuminant = "D65", grid: Grid = DEFAULT_GRID) -> Illuminant:
    """Build a light source from a spec string (see the module docstring).

    Examples
    --------
    >>> round(float(illuminant("D65").spd[180]), 1) > 0   # 560 nm
    True
    """
    if isinstance(spec, Illuminant):
        return spec
    spec = str(spec).strip()
    parts = spec.split("+") if _is_mixture(spec) else [spec]
    if len(parts) == 1 and "@" not in spec:
        name, spd, src = _one(spec, grid)
        return Illuminant(name, _normalised(spd, grid, spec), grid, src)
    total = np.zeros(grid.size)
    names, sources = [], []
    for p in parts:
        base, _, w = p.partition("@")
        try:
            weight = float(w) if w else 1.0
        except ValueError:
            raise InputError(f"weight '{w}' is not a number", source=spec) from None
        if weight < 0:
            raise InputError("mixture weights must be non-negative", source=spec)
        name, spd, src = _one(base, grid)
        total += weight * _normalised(spd, grid, base)
        names.append(f"{name}@{weight:g}")
        sources.append(src)
    return Illuminant("+".join(names), _normalised(total, grid, spec), grid, "; ".join(sources))
