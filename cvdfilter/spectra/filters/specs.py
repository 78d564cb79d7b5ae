"""Filter spec strings: parametric terms, sweeps, stacks.

A spec is one or more terms joined by ``*`` (a stack: the product of their
transmittances). A term is parametric when its kind word is a registered shape
(:data:`~cvdfilter.spectra.filters.shapes.FILTER_SHAPES`) written as
``kind:key=value,...`` (or the bare kind when the shape needs no parameter),
else a file or bundled example (:mod:`cvdfilter.spectra.filters.files`). The
form decides, never whether a file of that name happens to exist. Any number
may be a sweep ``START..STOP/STEP``: one filter per value, every combination.

Public: :func:`parse_filter_spec`, :func:`is_parametric`, :data:`SPEC_FORMS`.
"""

from __future__ import annotations

import itertools
import math
import pathlib
import re

import numpy as np

from ...errors import InputError, clip_text, did_you_mean
from ..grid import DEFAULT_GRID, Grid
from .files import FileTerm, example_names, file_term, from_file
from .filter_set import MAX_SWEEP_MEMBERS, FilterSet, check_members
from .shapes import FILTER_SHAPES, KEY_ALIASES, PARAMETER_RANGES, is_parametric

__all__ = ["parse_filter_spec", "is_parametric", "SPEC_FORMS"]

#: Spec forms shown by ``cvdfilter list filters``: each registered shape's form, then stacks and sweeps.
SPEC_FORMS = {**{name: shape.form for name, shape in FILTER_SHAPES.items()},
              "stack": "SPEC*SPEC (product of transmittances)",
              "sweep": "any number as START..STOP/STEP, e.g. center=540..600/5"}


def _range_parts(text: str) -> tuple[float, float, float]:
    lo, rest = text.split("..", 1)
    hi, _, step = rest.partition("/")
    lo_f, hi_f = float(lo), float(hi)
    return lo_f, hi_f, float(step) if step else (hi_f - lo_f)


def _count(text: str, key: str, spec: str) -> int:
    """Members of one value (1, or a START..STOP/STEP range), counted before anything is allocated."""
    if ".." not in text:
        return 1
    try:
        lo_f, hi_f, step_f = _range_parts(text)
    except ValueError:
        raise InputError(f"{key}={clip_text(text)} is not a number or a START..STOP/STEP range", source=spec) from None
    if not (math.isfinite(lo_f) and math.isfinite(hi_f) and math.isfinite(step_f)) or hi_f < lo_f or (
            step_f <= 0 and hi_f > lo_f):
        raise InputError(f"{key}={clip_text(text)} is not a START..STOP/STEP range with STOP >= START and STEP > 0",
                         source=spec)
    if hi_f == lo_f:
        return 1
    n = math.floor((hi_f - lo_f) / step_f + 1e-9) + 1
    return int(min(n, 10**18))


def _parse_value(text: str, key: str, spec: str) -> np.ndarray:
    n = _count(text, key, spec)
    if n > MAX_SWEEP_MEMBERS:
        raise InputError(f"sweep {key}={clip_text(text)} gives {n:,} values", source=spec,
                         hint=f"at most {MAX_SWEEP_MEMBERS:,} filters per spec")
    if ".." in text:
        lo_f, _, step_f = _range_parts(text)
        return np.round(lo_f + (step_f if n > 1 else 0.0) * np.arange(n), 10)
    try:
        v = float(text)
    except ValueError:
        raise InputError(f"{key}={clip_text(text)} is not a number or a START..STOP/STEP range", source=spec) from None
    if not math.isfinite(v):
        raise InputError(f"{key}={clip_text(text)} is not a finite number", source=spec)
    return np.array([v])


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def _kind(term: str) -> str:
    return term.partition(":")[0].strip().lower()


def _parametric_count(term: str, spec: str) -> int:
    """How many filters a parametric term describes, without building them."""
    kind, params, _ = _parametric_params(term, spec)
    return math.prod(_count(params[k], k, spec) for k in params)


def _parametric(term: str, spec: str, grid: Grid) -> FilterSet:
    kind, params, words = _parametric_params(term, spec)
    keys = sorted(params)
    n_total = math.prod(_count(params[k], k, spec) for k in keys)
    check_members(n_total, spec, grid)
    values = {k: _parse_value(params[k], k, spec) for k in keys}
    return _build_parametric(kind, keys, values, words, spec, grid)


def _parametric_params(term: str, spec: str) -> tuple[str, dict[str, str], dict[str, str]]:
    kind, _, rest = term.partition(":")
    kind = kind.strip().lower()
    shape = FILTER_SHAPES[kind]
    form = SPEC_FORMS[kind]
    params: dict[str, str] = {}
    words: dict[str, str] = {}
    for part in filter(None, (p.strip() for p in rest.split(","))):
        key, eq, val = part.partition("=")
        key = key.strip().lower()
        key = KEY_ALIASES.get(key, key)
        if not eq:
            raise InputError(f"'{clip_text(part)}' is not key=value", source=spec, hint=form)
        if key not in shape.keys:
            close = did_you_mean(key, sorted(shape.keys | set(KEY_ALIASES)))
            raise InputError(f"unknown parameter '{clip_text(key)}' for {kind}" + (f"; {close}" if close else ""),
                             source=spec, hint=form)
        if key in params or key in words:
            raise InputError(f"'{key}' is given twice", source=spec)
        if key in shape.words:
            allowed = shape.words[key]
            if val.strip() not in allowed:
                raise InputError(f"{key} must be {' or '.join(allowed)}, got '{clip_text(val)}'", source=spec)
            words[key] = val.strip()
            continue
        params[key] = val.strip()
    missing = shape.required - params.keys()
    if missing:
        raise InputError(f"{kind} needs {', '.join(sorted(missing))}", source=spec, hint=form)
    if shape.one_of and len(shape.one_of & params.keys()) != 1:
        raise InputError(f"{kind} needs exactly one of {' or '.join(sorted(shape.one_of))}", source=spec, hint=form)
    return kind, params, words


def _build_parametric(kind, keys, values, words, spec, grid) -> FilterSet:
    combos = np.array(list(itertools.product(*(values[k] for k in keys))), dtype=float).reshape(-1, len(keys))
    p = {k: combos[:, i] for i, k in enumerate(keys)}
    _check_ranges(p, spec)
    return parametric_filters(kind, keys, p, words, grid)


def parametric_filters(kind: str, keys, p: dict, words: dict, grid: Grid) -> FilterSet:
    """The filters of shape ``kind`` with parameter arrays ``p`` (one value per filter, checked ranges),
    named by their spec strings; the one construction of parametric filters (sweeps streamed by
    :mod:`cvdfilter.filter_source` build their chunks with it too)."""
    t = np.atleast_2d(FILTER_SHAPES[kind].build(grid.wavelengths, p, words))
    n = t.shape[0]
    # a sweep repeats its values: each distinct one is formatted once ("key=text" and its number)
    cols = [_fmt_each(p[k], n, k) for k in keys]
    words_kv = [f"{k}={w}" for k, w in words.items()]
    if keys:
        tail = "," + ",".join(words_kv) if words_kv else ""
        names = [f"{kind}:" + ",".join(row) + tail for row in zip(*(kv for kv, _ in cols))]
    else:
        names = [f"{kind}:" + ",".join(words_kv)] * n
    # the record keeps the parsed parameters (as the spec string writes them), so nothing re-parses names
    info = tuple({"spec": nm, "kind": kind, "parameters": dict(zip(keys, row))}
                 for nm, row in zip(names, zip(*(num for _, num in cols)) if keys else [()] * n))
    return FilterSet(tuple(names), np.clip(t, 0.0, 1.0), grid, ("spec",) * len(names), info)


def _fmt_each(values, n: int, key: str) -> tuple[list[str], list[float]]:
    """Per value of the first ``n``: ``key=`` and its ``_fmt`` text, and the number that text writes; each
    distinct value (bit pattern: -0.0 is not 0.0) formatted once."""
    v = np.ascontiguousarray(np.asarray(values, dtype=float)[:n])
    bits, where = np.unique(v.view(np.int64), return_inverse=True)
    text = [_fmt(x) for x in bits.view(np.float64).tolist()]
    kv, num = [f"{key}={t}" for t in text], [float(t) for t in text]
    idx = where.reshape(-1).tolist()
    return [kv[j] for j in idx], [num[j] for j in idx]


def _check_ranges(p: dict, spec: str) -> None:
    for key, (lo, hi, what) in PARAMETER_RANGES.items():
        v = p.get(key)
        if v is not None and (np.any(v < lo) or np.any(v > hi)):
            raise InputError(f"{key} must be {what}", source=spec)


def parse_filter_spec(spec: str, grid: Grid = DEFAULT_GRID, *, units: str | None = None,
                      bandwidth: float | None = None) -> FilterSet:
    """Build the filters one spec string describes (see :mod:`cvdfilter.spectra.filters`).

    Raises
    ------
    cvdfilter.errors.InputError
        For an unknown name or kind, a bad parameter, an empty stack term, too
        many sweep members, or an unreadable file.
    """
    spec = spec.strip()
    if not spec:
        raise InputError("empty filter spec",
                         hint="give a file, an example name or e.g. notch:center=575,fwhm=35,depth=0.8")
    terms = [t.strip() for t in spec.split("*")]
    if any(not t for t in terms):
        raise InputError("empty term in a stack ('*' with nothing on one side)", source=spec,
                         hint="stack filters as A*B, e.g. notch:center=575,fwhm=35,depth=0.8*nd:t=0.5")
    counts = [_parametric_count(t, spec) if is_parametric(t) and "@" not in t else 1 for t in terms]
    check_members(math.prod(counts), spec, grid)  # before anything is built
    result: FilterSet | None = None
    for term in terms:
        part = _term(term, spec, grid, units, bandwidth)
        if result is not None:
            check_members(len(result) * len(part), spec, grid)
        result = part if result is None else result.stack(part)
    assert result is not None  # terms is never empty
    return result


def _term(term: str, spec: str, grid: Grid, units, bandwidth) -> FilterSet:
    if is_parametric(term):
        if "@" in term:
            raise InputError("'@' options apply to files, not to parametric filters", source=spec)
        return _parametric(term, spec, grid)
    path = pathlib.Path(term)
    if path.is_dir():
        raise InputError("is a folder, not a filter file", source=term)
    ft = file_term(term)
    if ft is not None:
        if ft.example is not None:
            return from_file(FileTerm(ft.path, ft.column, ft.units, ft.bandwidth, ft.example), grid, None, None,
                             "example", term)
        return from_file(ft, grid, units, bandwidth, "file", term)
    kind = _kind(term)
    looks_parametric = ":" in term and "=" in term.partition(":")[2] and re.fullmatch(r"[A-Za-z_-]+", kind)
    if not looks_parametric and (any(ch in term for ch in "/\\") or path.suffix):
        raise InputError("no such file", source=clip_text(term.partition("@")[0], 200))
    close = did_you_mean(kind if ":" in term else term, list(FILTER_SHAPES) + example_names())
    raise InputError(f"unknown filter '{clip_text(term)}'" + (f"; {close}" if close else ""), source=spec,
                     hint="give a file path, an example name (cvdfilter list filters) or a spec such as "
                          "notch:center=575,fwhm=35,depth=0.8")

