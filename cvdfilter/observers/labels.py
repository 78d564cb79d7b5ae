"""One readable label per observer, used by every figure, table and report.

``protanomalous:shift=16`` reads ``protanomalous (16 nm)``; ``normal:age=70,field=10``
reads ``normal (70 y, 10°)``; ``deuteranomalous:severity=0.6,model=machado2009``
reads ``deuteranomalous (Machado severity 0.6)``. The spec string stays the
machine key (JSON, CSV); this label is what people read.

Public: :func:`observer_label`.
"""

from __future__ import annotations

__all__ = ["observer_label"]


def observer_label(obs) -> str:
    """The readable label of an observer (an :class:`~cvdfilter.observers.observer.Observer` or a spec string).

    Examples
    --------
    >>> observer_label("protanomalous:shift=16")
    'protanomalous (16 nm)'
    >>> observer_label("normal")
    'normal'
    """
    if isinstance(obs, str):
        from .observer import observer

        obs = observer(obs)
    name = obs.spec.split(":", 1)[0]
    p = obs.params
    extra = []
    if obs.kind == "anomalous":
        if p.get("model") == "machado2009":
            extra.append(f"Machado severity {p['severity']:g}")
        else:
            extra.append(f"{p['shift']:.4g} nm")  # the default shifts are not whole numbers (17.35, 21.35)
    if p.get("age", 32.0) != 32.0:
        extra.append(f"{p['age']:g} y")
    if p.get("field", 2.0) != 2.0:
        extra.append(f"{p['field']:g}\u00b0")
    if p.get("data", "cie2006") != "cie2006":
        extra.append(p["data"])
    return name + (" (" + ", ".join(extra) + ")" if extra else "")
