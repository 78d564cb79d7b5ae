"""Features of one measured transmittance curve: notches, edges, band-passes, broad dips, ripple.

Public: :func:`find_features`, :func:`find_notches`, :func:`filter_notches`, :func:`noise_level`,
:data:`NOISE_SIGMAS`, :data:`RIPPLE_FLOOR`, :data:`RIPPLE_MIN_COUNT`, :data:`BROAD_DIP_NM`,
:data:`MIN_SAMPLES_DEEP`.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from .filter_set import FilterSet

__all__ = ["find_features", "find_notches", "filter_notches", "noise_level", "NOISE_SIGMAS", "RIPPLE_FLOOR",
           "RIPPLE_MIN_COUNT", "BROAD_DIP_NM", "MIN_SAMPLES_DEEP"]


#: Features shallower than this many noise standard deviations are noise (common practice: 5 sigma).
NOISE_SIGMAS = 5.0
#: Dips shallower than this (transmittance, absolute) are not even ripple (common practice).
RIPPLE_FLOOR = 0.01
#: At least this many small dips in a row make a ripple.
RIPPLE_MIN_COUNT = 3
#: Dips wider than this at half depth are a tint's broad absorption, not a notch (common practice: notch
#: filters for colour vision are tens of nm wide).
BROAD_DIP_NM = 100.0
#: A dip must lie more than the detection threshold below its baseline on at least this many samples to be
#: told from one bad sample.
MIN_SAMPLES_DEEP = 2


def noise_level(transmittance) -> float:
    """Standard deviation of sample-to-sample noise, from the second differences.

    For white noise of standard deviation s the second difference has standard
    deviation sqrt(6) s; the median absolute deviation (scaled by 1/0.6745 for a
    normal distribution) makes the estimate blind to a few sharp features
    (common practice in spectroscopy).
    """
    t = np.asarray(transmittance, dtype=float)
    if t.size < 5:
        return 0.0
    d2 = np.diff(t, 2)
    return float(np.median(np.abs(d2 - np.median(d2))) / 0.6745 / math.sqrt(6.0))


def _runs(t):
    change = np.flatnonzero(np.diff(t) != 0) + 1
    starts = np.r_[0, change]
    ends = np.r_[change, t.size] - 1
    return starts, ends


def _local_minima(t):
    """(first, last) index of every run of equal values lower than both neighbouring runs (or an end)."""
    starts, ends = _runs(t)
    vals = t[starts]
    left_higher = np.r_[True, vals[:-1] > vals[1:]]
    right_higher = np.r_[vals[1:] > vals[:-1], True]
    keep = left_higher & right_higher
    return list(zip(starts[keep].tolist(), ends[keep].tolist()))


def _crossing(wl, t, i, level, direction):
    """Wavelength where t first reaches ``level`` walking from index i (direction -1 or +1), or None.

    ``level`` is a scalar or an array over wavelengths (a sloping baseline).
    """
    lev = np.broadcast_to(np.asarray(level, dtype=float), t.shape)
    if direction < 0:
        seg = np.flatnonzero(t[:i + 1][::-1] >= lev[:i + 1][::-1])
        if seg.size == 0:
            return None
        j = i - int(seg[0])
        k = j + 1
    else:
        seg = np.flatnonzero(t[i:] >= lev[i:])
        if seg.size == 0:
            return None
        j = i + int(seg[0])
        k = j - 1
    if j == i:
        return float(wl[i])
    d_j, d_k = t[j] - lev[j], t[k] - lev[k]
    f = d_j / (d_j - d_k) if d_j != d_k else 0.0
    return float(wl[j] + f * (wl[k] - wl[j]))


def _baseline(wl, t, c, w):
    """Straight local baseline through the curve's median at c - 2w and c + 2w (bands w wide)."""
    anchors = []
    for side in (-1, 1):
        centre = c + side * 2 * w
        band = (wl >= centre - w / 2) & (wl <= centre + w / 2)
        if not band.any():
            edge = wl <= c - 1.5 * w if side < 0 else wl >= c + 1.5 * w
            band = edge
        if band.any():
            anchors.append((float(np.median(wl[band])), float(np.median(t[band]))))
    if not anchors:
        return None
    if len(anchors) == 1:
        return np.full(wl.shape, anchors[0][1])
    (x0, y0), (x1, y1) = anchors
    return y0 + (y1 - y0) * (wl - x0) / (x1 - x0)


def _notch(wl, t, a, b, thr, step):
    """Refine a dip (minimum run a..b) against its local baseline; dict, None, or {"ignored": why}."""
    i = (a + b) // 2
    tmin = float(t[a])
    lo_s = float(t[:a].max()) if a > 0 else tmin
    hi_s = float(t[b + 1:].max()) if b + 1 < t.size else tmin
    shoulder = min(lo_s, hi_s)
    level = np.full(t.shape, tmin + (shoulder - tmin) / 2)
    base = None
    for _ in range(8):
        lo = _crossing(wl, t, a, level, -1)
        hi = _crossing(wl, t, b, level, +1)
        if lo is None or hi is None or hi <= lo:
            return None
        new_base = _baseline(wl, t, (lo + hi) / 2, hi - lo)
        if new_base is None or (base is not None and np.allclose(new_base, base, atol=1e-7)):
            break
        base = new_base
        depth = float(base[i]) - tmin
        if depth < thr:
            return {"ignored": f"dip at {wl[i]:.1f} nm is {depth:.3f} deep against its local baseline"}
        level = base - depth / 2
    if base is not None:
        shoulder = float(base[i])
    base_line = base if base is not None else np.full(t.shape, shoulder)
    deep = int(np.sum((base_line - t) >= thr))
    if deep < MIN_SAMPLES_DEEP or (hi - lo) < step:
        return {"ignored": f"dip at {(lo + hi) / 2:.1f} nm lies on {deep} sample(s): narrower than the "
                           f"{step:g} nm sampling, taken as noise"}
    return {"kind": "notch", "center": float((lo + hi) / 2), "fwhm": float(hi - lo),
            "depth": float(1 - tmin / shoulder) if shoulder > 0 else 0.0,
            "depth_abs": float(shoulder - tmin), "baseline": shoulder, "min_transmittance": tmin,
            "fwhm_samples": float((hi - lo) / step)}


def _edge_feature(wl, t, a, b, top, direction):
    """A long-pass (direction +1: low at short wavelengths) or short-pass edge from the low run a..b."""
    tmin = float(t[a])
    i = b if direction > 0 else a
    half = _crossing(wl, t, i, tmin + 0.5 * (top - tmin), direction)
    p10 = _crossing(wl, t, i, tmin + 0.1 * (top - tmin), direction)
    p90 = _crossing(wl, t, i, tmin + 0.9 * (top - tmin), direction)
    if half is None:
        return None
    return {"kind": "edge", "direction": "long-pass" if direction > 0 else "short-pass", "center": half,
            "width": float(abs(p90 - p10)) if p10 is not None and p90 is not None else None,
            "low": tmin, "high": float(top)}


def find_features(wavelengths, transmittance, *, min_prominence: float = 0.05,
                  sampling_nm: float | None = None, notes: list | None = None) -> list[dict]:
    """Find and classify the features of one transmittance curve.

    Kinds:

    - ``notch``: a dip that rises back on both sides. Its FWHM is measured at
      half its depth below a straight *local* baseline through the curve at
      centre +- 2 FWHM (iterated), so a dip on a sloping tint gets its own
      width, not the width against its lower shoulder.
    - ``edge``: a dip that never rises back on one side: a ``long-pass``
      (low at short wavelengths) or ``short-pass`` edge, at its 50 % point
      between the low level and the plateau, with its 10-90 % width.
    - ``band-pass``: a long-pass edge followed by a short-pass edge; centre
      and FWHM between their 50 % points.
    - ``broad dip``: a dip wider than :data:`BROAD_DIP_NM` at half depth (a
      tint's absorption band rather than a notch).
    - ``ripple``: three or more dips deeper than the noise and
      :data:`RIPPLE_FLOOR` but shallower than ``min_prominence``.

    Dips shallower than ``max(min_prominence, NOISE_SIGMAS * noise_level)``
    are ignored, and so are dips with fewer than
    :data:`MIN_SAMPLES_DEEP` samples deeper than the threshold or narrower
    than the sampling (a single bad sample is not a notch).

    Parameters
    ----------
    wavelengths, transmittance
        nm and fraction 0-1, shape (n_pts,), wavelengths increasing.
    min_prominence
        Smallest depth (transmittance, absolute) of a notch or edge.
    sampling_nm
        The measurement's sampling interval (default: the median spacing).
    notes
        If given, a sentence per ignored dip is appended to it.

    Returns
    -------
    list of dict
        One per feature, sorted by wavelength, each with ``kind`` and ``center`` (nm).
    """
    wl = np.asarray(wavelengths, dtype=float)
    t = np.asarray(transmittance, dtype=float)
    if wl.size < 3:
        return []
    step = float(sampling_nm) if sampling_nm else float(np.median(np.diff(wl)))
    noise = noise_level(t)
    thr = max(min_prominence, NOISE_SIGMAS * noise)
    features, small, ignored = _dips(wl, t, thr, max(RIPPLE_FLOOR, NOISE_SIGMAS * noise), step)
    features.sort(key=lambda f: f["center"])
    out = _join_band_passes(wl, t, features)
    if len(small) >= RIPPLE_MIN_COUNT:
        xs = [x for x, _ in small]
        out.append({"kind": "ripple", "center": float((xs[0] + xs[-1]) / 2), "from_nm": float(xs[0]),
                    "to_nm": float(xs[-1]), "amplitude": float(max(p for _, p in small)), "count": len(small)})
        out.sort(key=lambda f: f["center"])
    for f in out:
        f["noise_level"] = noise
        if f["kind"] == "notch" and f["fwhm"] > BROAD_DIP_NM:
            f["kind"] = "broad dip"
    if notes is not None:
        notes.extend(ignored)
    return out


def _dips(wl, t, thr, ripple_floor, step) -> tuple[list[dict], list[tuple], list[str]]:
    """Classify every local minimum: (notches and edges, small dips as (nm, prominence), ignored-dip notes)."""
    tmax = float(t.max())
    features: list[dict] = []
    small: list[tuple] = []
    ignored: list[str] = []
    for a, b in _local_minima(t):
        tmin = float(t[a])
        left, right = t[:a], t[b + 1:]
        lower_l = np.flatnonzero(left <= tmin)  # ties: the leftmost of equal minima carries the feature
        lower_r = np.flatnonzero(right < tmin)
        l_open, r_open = lower_l.size == 0, lower_r.size == 0
        ls = tmax if l_open else float(left[lower_l[-1] + 1:].max())
        rs = tmax if r_open else float(right[:lower_r[0]].max())
        prom = min(ls, rs) - tmin
        if prom < ripple_floor:
            continue
        if prom < thr:
            small.append((wl[(a + b) // 2], prom))
            continue
        half = tmin + prom / 2
        rises_l = _crossing(wl, t, a, half, -1) is not None
        rises_r = _crossing(wl, t, b, half, +1) is not None
        f: dict | None = None
        if rises_l and rises_r:
            f = _notch(wl, t, a, b, thr, step)
            if f is not None and "ignored" in f:
                ignored.append(f["ignored"])
                continue
        elif rises_r:
            f = _edge_feature(wl, t, a, b, rs if not r_open else float(right.max()), +1)
        elif rises_l:
            f = _edge_feature(wl, t, a, b, ls if not l_open else float(left.max()), -1)
        if f:
            features.append(f)
    return features, small, ignored


def _join_band_passes(wl, t, features: list[dict]) -> list[dict]:
    """A long-pass edge followed by a short-pass edge with nothing between is a band-pass."""
    out: list[dict] = []
    for f in features:
        if (f["kind"] == "edge" and f["direction"] == "short-pass" and out and out[-1]["kind"] == "edge"
                and out[-1]["direction"] == "long-pass" and out[-1]["center"] < f["center"]):
            lp = out.pop()
            inside = (wl >= lp["center"]) & (wl <= f["center"])
            out.append({"kind": "band-pass", "center": (lp["center"] + f["center"]) / 2,
                        "fwhm": f["center"] - lp["center"],
                        "peak_transmittance": float(t[inside].max()) if inside.any() else None,
                        "edges": [lp, f]})
        else:
            out.append(f)
    return out


def find_notches(wavelengths, transmittance, *, min_prominence: float = 0.05,
                 sampling_nm: float | None = None) -> list[dict]:
    """The notches among :func:`find_features` (edges, band-passes and ripple left out).

    Returns
    -------
    list of dict
        ``center`` (nm), ``fwhm`` (nm, at half depth below the local baseline),
        ``depth`` (1 - T_min / T_baseline), ``min_transmittance``,
        ``fwhm_samples`` (width in sampling steps).
    """
    return [{k: f[k] for k in ("center", "fwhm", "depth", "min_transmittance", "fwhm_samples")}
            for f in find_features(wavelengths, transmittance, min_prominence=min_prominence,
                                   sampling_nm=sampling_nm) if f["kind"] == "notch"]


def filter_notches(fs: FilterSet) -> list[list[dict]]:
    """The notches of every filter of a set: from a file's measured samples when the filter is one file
    column (so its own sampling decides what is noise), else found on the grid.

    Returns one list per filter, as :func:`find_notches` does.
    """
    keys = ("center", "fwhm", "depth", "min_transmittance", "fwhm_samples")
    out = []
    for i in range(len(fs)):
        info = fs.info[i] if i < len(fs.info) else {}
        feats = info.get("features")
        if feats is None:
            out.append(find_notches(fs.wavelengths, fs.transmittance[i]))
        else:
            out.append([{k: f[k] for k in keys} for f in feats if f["kind"] == "notch"])
    return out
