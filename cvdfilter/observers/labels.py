"""One readable label per observer, used by every figure, table and report.

``protanomalous:shift=16`` reads ``protanomalous (shift 16 nm)``; ``normal:age=70,field=10``
reads ``normal (70 y, 10°)``; ``deuteranomalous:severity=0.6,model=machado2009``
reads ``deuteranomalous (Machado severity 0.6)``; a population
``deuteranomalous:n=200,seed=7`` reads ``deuteranomalous (6 nm apart), n=200``.
The spec string stays the machine key (JSON, CSV); this label is what people
read, and :func:`label_legend` maps each label back to its full spec for the
line under a table.

Public: :func:`observer_label`, :func:`table_labels`, :func:`label_legend`.
"""

from __future__ import annotations

__all__ = ["observer_label", "table_labels", "label_legend"]


def observer_label(obs) -> str:
    """The readable label of an observer (an :class:`~cvdfilter.observers.observer.Observer` or a spec string).

    Examples
    --------
    >>> observer_label("protanomalous:shift=16")
    'protanomalous (shift 16 nm)'
    >>> observer_label("normal")
    'normal'
    """
    if isinstance(obs, str):
        from .population import is_population_spec

        if is_population_spec(obs):
            from .population import parse_population_spec

            return _population_label(parse_population_spec(obs))
        from .observer import observer

        obs = observer(obs)
    if type(obs).__name__ == "Population":
        return _population_label(obs._ps)
    name = obs.spec.split(":", 1)[0]
    p = obs.params
    extra = []
    if obs.kind == "anomalous":
        if p.get("model") == "machado2009":
            extra.append(f"Machado severity {p['severity']:g}")
        else:
            # Say it the way the spec does: a residual separation ("6 nm apart", the default severities of
            # DeMarco et al. 1992) or a peak shift ("shift 16 nm").
            if "separation=" in obs.spec:
                extra.append(f"{p['separation']:.4g} nm apart")
            else:
                extra.append(f"shift {p['shift']:.4g} nm")
    if p.get("age", 32.0) != 32.0:
        extra.append(f"{p['age']:g} y")
    if p.get("field", 2.0) != 2.0:
        extra.append(f"{p['field']:g}\u00b0")
    if p.get("data", "cie2006") != "cie2006":
        extra.append(p["data"])
    return name + (" (" + ", ".join(extra) + ")" if extra else "")


def _population_label(ps) -> str:
    """``<centre label>, n=N``; an age range replaces the centre's age (``20-70 y``)."""
    centre = observer_label(ps.centre)
    if ps.age[0] != "fixed":
        ages = (f"{ps.age[1]:g}-{ps.age[2]:g} y" if ps.age[0] == "uniform"
                else "|".join(f"{a:g}" for a in ps.age[1:]) + " y")
        name, _, rest = centre.partition(" (")
        extra = [e for e in rest.rstrip(")").split(", ") if e and not e.endswith(" y")] if rest else []
        centre = name + " (" + ", ".join([*extra, ages]) + ")"
    return f"{centre}, n={ps.n}"


def table_labels(specs) -> list[str]:
    """The readable label of each observer spec, made unique (``#2``, ``#3`` ... on repeats) so a table row
    maps back to one spec. Specs that are no observer spec (e.g. already a label) are kept as they are.

    Examples
    --------
    >>> table_labels(["normal", "deuteranomalous:n=200,seed=7"])
    ['normal', 'deuteranomalous (6 nm apart), n=200']
    """
    from ..errors import InputError

    out: list[str] = []
    for spec in specs:
        try:
            label = observer_label(str(spec))
        except InputError:
            label = str(spec)
        base, k = label, 1
        while label in out:
            k += 1
            label = f"{base} #{k}"
        out.append(label)
    return out


def label_legend(specs, *, prefix: str = "Observers: ") -> str:
    """One line mapping each table label to its full canonical spec (``label = spec; ...``), or ``""`` when
    every label is its spec already.

    Examples
    --------
    >>> label_legend(["normal", "protanomalous:shift=16"])
    'Observers: protanomalous (shift 16 nm) = protanomalous:shift=16.'
    """
    specs = [str(s) for s in specs]
    pairs = [(lab, s) for lab, s in zip(table_labels(specs), specs) if lab != s]
    return prefix + "; ".join(f"{lab} = {s}" for lab, s in pairs) + "." if pairs else ""
