"""Road use in words: the sentences that explain a filter's road-use verdict (ISO 12312-1 checks, signal
quotients, night use), for one filter or many at once; numbers from :mod:`cvdfilter.metrics.road_use`.

Public: :func:`road_use_reasons`, :func:`road_use_reasons_many` (both re-exported by
:mod:`cvdfilter.metrics.road_use`).
"""

from __future__ import annotations

import numpy as np

from .road_use import NIGHT_MIN, RATIO_BAND_NM, RATIO_LIMIT, SIGNAL_LIMITS, category_text

__all__ = ["road_use_reasons", "road_use_reasons_many"]


def road_use_reasons(tau_v: float, category: int, min_ratio: float, at_nm: float, quotients: dict,
                     worst_lights: dict | None = None, limits: dict | None = None) -> list[str]:
    """Plain sentences explaining the road-use verdict for one filter.

    Parameters
    ----------
    tau_v : float
        Luminous transmittance (D65), fraction.
    category : int
        From :func:`iso12312_category`.
    min_ratio, at_nm : float
        From :func:`min_ratio_in_band`.
    quotients : dict
        colour -> quotient.
    worst_lights : dict, optional
        colour -> the light giving the lowest quotient.
    limits : dict, optional
        Signal-quotient limits (default :data:`SIGNAL_LIMITS`).

    Examples
    --------
    >>> for s in road_use_reasons(0.5, 1, 1.0, 475.0, {"red": 1.0, "yellow": 1.0, "green": 1.0, "blue": 1.0}):
    ...     print(s)
    Luminous transmittance 50.0 % (CIE D65, CIE 1931 2 deg V(lambda)) is in ISO 12312-1 category 1 (over 43 to 80 %).
    Spectral transmittance stays at or above 0.2 x the luminous transmittance from 475 to 650 nm
    (lowest 1.00 x, at 475 nm).
    Signal quotients meet their limits: red 1.00, yellow 1.00, green 1.00, blue 1.00.
    Luminous transmittance is below 75 %: not suitable for driving at dusk or at night.
    """
    worst = {c: [w] for c, w in (worst_lights or {}).items()}
    return road_use_reasons_many([tau_v], [category], [min_ratio], [at_nm], {c: [q] for c, q in quotients.items()},
                                 worst, limits)[0]


def road_use_reasons_many(tau_v, category, min_ratio, at_nm, quotients: dict, worst_lights: dict | None = None,
                          limits: dict | None = None) -> list[list[str]]:
    """:func:`road_use_reasons` of many filters at once (the one construction of the sentences).

    Parameters
    ----------
    tau_v, category, min_ratio, at_nm : sequence
        Per filter, as :func:`road_use_reasons` takes them for one.
    quotients : dict
        colour -> sequence of quotients over the filters.
    worst_lights : dict, optional
        colour -> sequence over the filters of the light giving the lowest quotient.
    limits : dict, optional
        Signal-quotient limits (default :data:`SIGNAL_LIMITS`).

    Returns
    -------
    list of list of str
        Per filter, its sentences.

    >>> road_use_reasons_many([0.0, 0.9], [-1, 0], [0.5, 1.0], [500.0, 475.0], {"red": [0.0, 1.0]})[1][-1]
    'Luminous transmittance is at least 75 %, the condition for driving at dusk or at night.'
    """
    worst_lights = worst_lights or {}
    limits = SIGNAL_LIMITS if limits is None else limits
    lo, hi = RATIO_BAND_NM
    ratio_ok = (f"Spectral transmittance stays at or above {RATIO_LIMIT:g} x the luminous transmittance from "
                f"{lo:g} to {hi:g} nm (lowest ")
    ratio_low = f"; road use needs at least {RATIO_LIMIT:g} x everywhere from {lo:g} to {hi:g} nm."
    limit_text = {c: f"{limits[c]:g}" for c in quotients}
    cat_text: dict = {}

    def listed(v):
        return v.tolist() if isinstance(v, np.ndarray) else list(v)

    taus, cats, ratios, ats = listed(tau_v), [int(c) for c in listed(category)], listed(min_ratio), listed(at_nm)
    qs = {c: listed(q) for c, q in quotients.items()}
    worst = {c: listed(w) for c, w in worst_lights.items()}
    fails = {c: (~(np.asarray(q, dtype=float).reshape(-1) >= limits[c])).tolist() for c, q in qs.items()}
    any_fails = [any(f) for f in zip(*fails.values())] if fails else [False] * len(taus)
    meet = "Signal quotients meet their limits: " + ", ".join(c.replace("{", "{{").replace("}", "}}") + " {:.2f}"
                                                                for c in qs) + "."
    # the numbers as the sentences write them, column by column
    pct = [f"{100 * t:.1f} %" for t in taus]
    ratio_text = [f"{x:.2g}" if x < 0.095 else f"{x:.2f}" for x in ratios]  # 2 significant digits when small
    at_text = [f"{x:g}" for x in ats]
    meets = list(map(meet.format, *qs.values())) if qs else [meet] * len(taus)
    out = []
    for i, tau in enumerate(taus):
        if not tau > 0:
            out.append(["The filter transmits no light in the visible range: not suitable for road use."])
            continue
        cat, mr = cats[i], ratios[i]
        if cat >= 0:
            if cat not in cat_text:
                cat_text[cat] = f"category {cat} ({category_text(cat)})."
            s = [f"Luminous transmittance {pct[i]} (CIE D65, CIE 1931 2 deg V(lambda)) is in ISO 12312-1 "
                 f"{cat_text[cat]}"]
        else:
            s = [f"Luminous transmittance {pct[i]} is at or below 3 %, outside the ISO 12312-1 categories: "
                 "not suitable for road use."]
        if cat == 4:
            s.append("Category 4 filters are not suitable for driving.")
        if mr >= RATIO_LIMIT:
            s.append(f"{ratio_ok}{ratio_text[i]} x, at {at_text[i]} nm).")
        else:
            s.append(f"Spectral transmittance falls to {ratio_text[i]} x the luminous transmittance at {at_text[i]} nm"
                     + ratio_low)
        if any_fails[i]:
            s += [f"The {c} signal quotient is {qs[c][i]:.2f}, below the limit of {limit_text[c]}"
                  + (f" (lowest with the {worst[c][i]} light)" if c in worst else "") + "."
                  for c in qs if fails[c][i]]
        else:
            s.append(meets[i])
        s.append(_night_sentence(tau, cat, mr, any_fails[i]))
        out.append(s)
    return out


def _night_sentence(tau: float, cat: int, min_ratio: float, failing: bool) -> str:
    """The dusk-and-night sentence of one filter (after its daytime checks)."""
    if round(tau, 9) < NIGHT_MIN:
        return "Luminous transmittance is below 75 %: not suitable for driving at dusk or at night."
    if 0 <= cat <= 3 and min_ratio >= RATIO_LIMIT and not failing:
        return "Luminous transmittance is at least 75 %, the condition for driving at dusk or at night."
    return ("Luminous transmittance is at least 75 %, but the filter fails a daytime check above, so it "
            "is not suitable at dusk or at night either.")
