"""Colour rendition of a light seen through a filter (normal observer), via colour-science.

The test light is the illuminant multiplied by the filter's transmittance.
Everything is computed by colour-science's own implementations:

* CIE 2017 colour fidelity index R_f (CIE 224:2017), identical to ANSI/IES
  TM-30-18 R_f: ``colour.quality.colour_fidelity_index_ANSIIESTM3018``;
* TM-30 gamut index R_g and the 16 hue-bin local chroma shifts R_cs,h1..h16
  (percent; positive = more saturated than under the reference illuminant),
  from the same call;
* CIE 13.3-1995 general colour rendering index R_a:
  ``colour.colour_rendering_index``;
* the test light's correlated colour temperature (K) and D_uv, as TM-30 reports them.

This costs about 0.1 s per filter, so it belongs to ``metrics="all"`` and not
to large sweeps. Results are remembered in memory by the light's spectrum for
the life of the process (never written to disk: they are results on a user's
filter), so scoring the same filter again in one session costs nothing.

References: CIE 224:2017, CIE 2017 Colour Fidelity Index for accurate
scientific use; ANSI/IES TM-30-18, IES Method for Evaluating Light Source
Color Rendition; CIE 13.3-1995, Method of Measuring and Specifying Colour
Rendering Properties of Light Sources.

Public: :data:`RENDITION_KEYS`, :func:`rendition`, :func:`rendition_many`.
"""

from __future__ import annotations

import hashlib
import warnings

import numpy as np

from ..spectra.cache import memo_arrays

__all__ = ["RENDITION_KEYS", "rendition", "rendition_many"]

#: Keys of the rendition block, in order.
RENDITION_KEYS = ("rf", "rg", "ra", "chroma_shifts", "cct_k", "duv")
#: Runs with more filters than this are not remembered in memory (the memo would only churn).
_CACHE_MAX_FILTERS = 64


def _compute(spd: np.ndarray, wavelengths: np.ndarray) -> dict:
    import colour

    nan = {"rf": np.nan, "rg": np.nan, "ra": np.nan, "chroma_shifts": np.full(16, np.nan),
           "cct_k": np.nan, "duv": np.nan}
    if not np.any(spd > 0):
        return nan
    sd = colour.SpectralDistribution(spd, wavelengths, name="illuminant x filter")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            spec = colour.quality.colour_fidelity_index_ANSIIESTM3018(sd, additional_data=True)
            ra = colour.colour_rendering_index(sd)
    except Exception:  # noqa: BLE001 - a light colour-science cannot rate gets NaN, not a crash
        return nan
    return {"rf": float(spec.R_f), "rg": float(spec.R_g), "ra": float(ra),
            "chroma_shifts": np.asarray(spec.R_cs, dtype=float), "cct_k": float(spec.CCT),
            "duv": float(spec.D_uv)}


def rendition(spd, wavelengths, *, cache: bool = True) -> dict:
    """Colour rendition of one light.

    Parameters
    ----------
    spd : array_like
        Relative spectral power (the illuminant times the filter), shape (n_wl,).
    wavelengths : array_like
        nm, shape (n_wl,).
    cache : bool
        Look the result up in (and store it to) the in-process memo (never on disk).

    Returns
    -------
    dict
        ``rf``, ``rg``, ``ra`` (unitless indices), ``chroma_shifts`` (16
        values, percent), ``cct_k`` (K), ``duv``. NaN where colour-science
        cannot rate the light (e.g. a black filter).

    Examples
    --------
    >>> import colour
    >>> fl2 = colour.SDS_ILLUMINANTS["FL2"]
    >>> r = rendition(fl2.values, fl2.wavelengths, cache=False)
    >>> round(r["rf"]), round(r["rg"]), round(r["ra"])
    (70, 86, 64)
    """
    spd = np.asarray(spd, dtype=float)
    wl = np.asarray(wavelengths, dtype=float)
    if not cache:
        return _compute(spd, wl)
    top = float(spd.max()) if spd.size else 0.0
    norm = np.round(spd / top, 10) if top > 0 else spd
    key = hashlib.sha1(norm.tobytes() + wl.tobytes()).hexdigest()

    def build():
        r = _compute(spd, wl)
        return {k: np.asarray(v, dtype=float) for k, v in r.items()}

    arrays = memo_arrays(f"rendition-{key}", build)
    return {k: (arrays[k].copy() if k == "chroma_shifts" else float(arrays[k])) for k in RENDITION_KEYS}


def rendition_many(spds, wavelengths, *, progress=None) -> dict:
    """Colour rendition of many lights, one colour-science call each.

    Parameters
    ----------
    spds : array_like
        Shape (n_filters, n_wl).
    wavelengths : array_like
        nm, shape (n_wl,).
    progress : callable, optional
        Called as ``progress(done, total)`` after each light.

    Returns
    -------
    dict of numpy.ndarray
        ``rf``, ``rg``, ``ra``, ``cct_k``, ``duv`` of shape (n_filters,) and
        ``chroma_shifts`` of shape (n_filters, 16).
    """
    spds = np.atleast_2d(np.asarray(spds, dtype=float))
    n = spds.shape[0]
    out = {k: np.full(n, np.nan) for k in RENDITION_KEYS if k != "chroma_shifts"}
    out["chroma_shifts"] = np.full((n, 16), np.nan)
    use_cache = n <= _CACHE_MAX_FILTERS
    for i in range(n):  # one colour-science call per light: the library works on one spectrum
        r = rendition(spds[i], wavelengths, cache=use_cache)
        for k in RENDITION_KEYS:
            out[k][i] = r[k]
        if progress is not None:
            progress(i + 1, n)
    return out
