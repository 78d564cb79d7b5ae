"""Inspect filters and list what the tool offers (the API behind ``list`` and ``inspect``).

Public: :func:`inspect_filters`, :func:`catalog`.
"""

from __future__ import annotations

import numpy as np

from ._version import __version__
from .cautions import CAVEAT
from .spectra.grid import DEFAULT_GRID, Grid

__all__ = ["inspect_filters", "catalog", "feature_text", "CATALOG_KINDS"]

CATALOG_KINDS = ("illuminants", "observers", "surfaces", "filters", "methods")


def catalog(kind: str) -> dict:
    """What is available: ``illuminants``, ``observers``, ``surfaces``, ``filters`` or simulation ``methods``."""
    from .errors import InputError

    if kind == "illuminants":
        from .spectra.illuminants import illuminant_names

        items = illuminant_names()
    elif kind == "observers":
        from .observers.specs import observer_forms

        items = observer_forms()
    elif kind == "surfaces":
        from .spectra.surfaces import SURFACE_SETS

        items = [{"name": k, "description": v} for k, v in SURFACE_SETS.items()]
        items.append({"name": "PATH", "description": "a reflectance file (first column nm, one column per sample)"})
    elif kind == "filters":
        from .spectra.filters import FILE_FORMS, SPEC_FORMS, example_names, example_path

        examples = []
        for n in example_names():
            first = example_path(n).read_text().splitlines()[0].lstrip("# ").strip()
            examples.append({"name": n, "description": first})
        items = {"examples": examples, "spec_forms": SPEC_FORMS, "file_forms": FILE_FORMS}
    elif kind == "methods":
        from .observers.simulate import METHOD_DESCRIPTIONS, NORMALISATIONS

        items = [{"name": k, "description": v} for k, v in METHOD_DESCRIPTIONS.items()]
        items += [{"name": f"normalisation={n}", "description": "machado2009: " + d}
                  for n, d in zip(NORMALISATIONS, ("von Kries at the cones (default; continuous in every parameter)",
                                                   "Machado's per-opponent-channel gains (refused where "
                                                   "ill-conditioned)"))]
    else:
        from .errors import clip_text, did_you_mean

        close = did_you_mean(kind, CATALOG_KINDS)
        raise InputError(f"unknown list '{clip_text(kind)}'" + (f"; {close}" if close else ""),
                         hint=f"use one of {', '.join(CATALOG_KINDS)}")
    return {"tool": "cvdfilter", "version": __version__, "kind": kind, "items": items}


def inspect_filters(filters, *, grid: Grid = DEFAULT_GRID, units: str | None = None,
                    bandwidth: float | None = None) -> dict:
    """Describe filters: range, sampling, units and the rule that decided them, extrapolation, extremes,
    classified features (notches, edges, band-passes, ripple), luminous transmittance, warnings.

    Features of a file are found on the measured curve (its own sampling), of a
    spec on the grid.

    Returns
    -------
    dict
        ``tool``, ``version``, ``caveat``, ``grid`` and ``filters`` (one dict per filter).
    """
    from .metrics.photometry import luminous_transmittance
    from .observers.fundamentals import cie1931_cmfs
    from .spectra.filters import find_features, load_filters
    from .spectra.illuminants import illuminant

    fs = load_filters(filters, grid=grid, units=units, bandwidth=bandwidth)
    tv = luminous_transmittance(fs.transmittance, illuminant("D65", grid).spd, cie1931_cmfs(grid)[:, 1])
    out = []
    for i, name in enumerate(fs.names):
        t = fs.transmittance[i]
        info = fs.info[i] if i < len(fs.info) else {}
        parts = info.get("parts")
        warnings = list(info.get("warnings", []))
        extrapolated = list(info.get("extrapolated", []))
        for p in parts or []:
            warnings += p.get("warnings", [])
            extrapolated += p.get("extrapolated", [])
        source = fs.sources[i] if i < len(fs.sources) else ""
        features = info.get("features")
        if features is None:
            features = find_features(grid.wavelengths, t)
        rounded = [{k: (round(v, 4) if isinstance(v, float) else v) for k, v in f.items() if k != "edges"}
                   for f in features]
        out.append({
            "name": name,
            "source": source,
            "path": info.get("path"),
            "column": info.get("column"),
            "column_number": info.get("column_number"),
            "sha256": info.get("sha256"),
            "measured_range_nm": info.get("range_nm"),
            "sampling_nm": info.get("step_nm"),
            "units": info.get("units", "fraction" if source == "spec" else None),
            "units_reason": info.get("units_reason", "parametric" if source == "spec" else None),
            "extrapolated": extrapolated,
            "min_transmittance": float(t.min()),
            "min_at_nm": float(grid.wavelengths[int(np.argmin(t))]),
            "max_transmittance": float(t.max()),
            "luminous_transmittance_d65": float(tv[i]),
            "features": rounded,
            "notches": [{k: f[k] for k in ("center", "fwhm", "depth", "min_transmittance")}
                        for f in rounded if f["kind"] == "notch"],
            "warnings": warnings,
        })
    return {"tool": "cvdfilter", "version": __version__, "caveat": CAVEAT,
            "grid": {"start_nm": grid.start, "end_nm": grid.end, "step_nm": grid.step}, "filters": out}


def feature_text(f: dict) -> str:
    """One feature from :func:`cvdfilter.spectra.filters.find_features` in a few words."""
    kind = f["kind"]
    if kind in ("notch", "broad dip"):
        return f"{kind} {f['center']:.1f} nm, FWHM {f['fwhm']:.1f} nm, depth {f['depth']:.3f}"
    if kind == "edge":
        width = f" (10-90 % over {f['width']:.1f} nm)" if f.get("width") is not None else ""
        return f"{f['direction']} edge {f['center']:.1f} nm{width}, {f['low']:.3f} to {f['high']:.3f}"
    if kind == "band-pass":
        return f"band-pass {f['center']:.1f} nm, FWHM {f['fwhm']:.1f} nm"
    if kind == "ripple":
        return f"ripple {f['from_nm']:.0f}-{f['to_nm']:.0f} nm, up to {f['amplitude']:.3f} ({f['count']} dips)"
    return kind
