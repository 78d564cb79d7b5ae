"""The CSV view's cells of a chunk's scorecard, column by column from its arrays (for streamed output).

``Scorecard.csv_rows`` builds each filter's JSON entry and flattens it, one filter at a time; a streamed run
(:mod:`cvdfilter.score_stream`) needs the same cells for millions of filters, so :func:`chunk_cells` builds
them a column at a time from the scorecard's arrays: numbers rounded as ``scorecard_json._num`` rounds them
(:func:`round_like_python`, the same doubles), per-filter cells repeated over the filter's observer rows,
observer cells interleaved (rows filter-major, as ``csv_rows``). Only the text that is per filter (names,
spec strings, the road-use sentences) is built per filter. A layout this module does not know (populations,
the discernible group) is left to ``csv_rows``: :func:`cells_match` compares the two on a probe of every run
and the stream falls back to ``csv_rows`` when they differ in any cell, value or type.

Public: :class:`Cells`, :func:`chunk_cells`, :func:`cells_match`, :func:`round_like_python`, :func:`csv_lines`.
"""

from __future__ import annotations

import dataclasses
import io
import itertools

import numpy as np

from .errors import InputError
from .score_plan import CONFUSION_KEYS, PAIR_KEYS

__all__ = ["Cells", "chunk_cells", "cells_match", "round_like_python", "csv_lines"]

#: Keys of a filter's ``info`` that leave its JSON entry with name, source, input and warnings only (sweeps).
_PLAIN_INFO = frozenset({"spec", "kind", "parameters"})
#: Arrow types of the streamed columns, and the numpy kind each one takes without a Python list.
_KINDS = {"double": "f", "int64": "i", "bool": "b"}


class Cells:
    """One column's cells over rows: ``values`` a numpy array (``null`` marks the empty cells) or a list of
    Python values (None: an empty cell); ``const``: every cell holds one value."""

    __slots__ = ("_values", "null", "const", "base", "per")

    def __init__(self, values, null=None, const: bool = False) -> None:
        self._values = values
        self.null = null
        self.const = const
        self.base: Cells | None = None  # from :meth:`repeat`: the cells before, each repeated ``per`` times
        self.per = 1

    @property
    def values(self):
        """The cells: a numpy array or a list (a repeated list is made when first asked for)."""
        if self._values is None and self.base is not None:
            self._values = list(itertools.chain.from_iterable(zip(*[self.base.values] * self.per)))
        return self._values

    def __len__(self) -> int:
        if self._values is None and self.base is not None:
            return len(self.base) * self.per
        return len(self.values)

    def tolist(self) -> list:
        """The cells as the CSV view's Python values (None where empty)."""
        if isinstance(self.values, list):
            return self.values
        vals = self.values.tolist()
        if self.null is not None and self.null.any():
            return [None if u else v for u, v in zip(self.null.tolist(), vals)]
        return vals

    def masked(self, undefined: np.ndarray) -> Cells:
        """The cells with those where ``undefined`` is True empty."""
        if isinstance(self.values, list):
            return Cells([None if u else v for u, v in zip(undefined.tolist(), self.values)])
        return Cells(self.values, undefined if self.null is None else self.null | undefined)

    def repeat(self, k: int) -> Cells:
        """Each cell ``k`` times in a row (a filter's cell on its ``k`` observer rows)."""
        if k == 1:
            return self
        if isinstance(self.values, list):
            out = Cells(None)  # the list is made when asked for; to Arrow by take (:meth:`arrow`)
        else:
            out = Cells(np.repeat(self.values, k), None if self.null is None else np.repeat(self.null, k))
        out.base, out.per = self, k
        return out

    def arrow(self, kind: str):
        """A pyarrow array of type ``kind`` (``string``, ``double``, ``int64`` or ``bool``)."""
        import pyarrow as pa

        typ = {"string": pa.string(), "double": pa.float64(), "int64": pa.int64(), "bool": pa.bool_()}[kind]
        if self._values is None and self.base is not None:  # a repeated list: its cells once, then taken
            return self.base.arrow(kind).take(pa.array(np.repeat(np.arange(len(self.base)), self.per)))
        v = self.values
        if isinstance(v, np.ndarray) and v.dtype.kind == _KINDS.get(kind):
            return pa.array(v, type=typ, mask=self.null if self.null is not None and self.null.any() else None)
        vals = self.tolist()
        if kind == "string":
            if self.const and vals and isinstance(vals[0], str):
                return pa.repeat(pa.scalar(vals[0], typ), len(vals))
            try:  # text cells as they are; anything else as its str()
                return pa.array(vals, type=typ)
            except (pa.ArrowInvalid, pa.ArrowTypeError):
                vals = [None if x is None else x if isinstance(x, str) else str(x) for x in vals]
        return pa.array(vals, type=typ)

    def csv_text(self) -> bool:
        """Text that a CSV writer would have to quote over several lines (a line break in a cell)."""
        if self._values is None and self.base is not None:
            return self.base.csv_text()
        return isinstance(self.values, list) and any(isinstance(x, str) and ("\n" in x or "\r" in x)
                                                     for x in (self.values[:1] if self.const else self.values))

    def csv_values(self) -> list:
        """The cells as the CSV writer takes them (booleans as ``true``/``false``, None empty)."""
        v = self.values
        if isinstance(v, np.ndarray) and v.dtype.kind == "b":
            text = np.where(v, "true", "false").astype(object)
            if self.null is not None:
                text[self.null] = None
            return text.tolist()
        if isinstance(v, np.ndarray) and v.dtype.kind in "fi":
            return self.tolist()
        return [("true" if x is True else "false" if x is False else x) for x in self.tolist()]


def round_like_python(values, digits: int) -> np.ndarray:
    """``round(x, digits) + 0.0`` of Python over an array, the same doubles; NaN where ``x`` is not finite.

    ``rint(x * 10**digits) / 10**digits`` is the double nearest the decimal that Python's ``round`` gives
    whenever the product, rounded to a double, is decided on the same side of a half-way point as the exact
    product: everywhere except within two units in the last place of a half-way point (or beyond 2**52),
    where Python's ``round`` decides.

    >>> round_like_python([0.1234565, -0.0000001, float("nan"), 2.675], 6).tolist()  # 0.1234565 is 0.12345649...9
    [0.123456, 0.0, nan, 2.675]
    """
    x = np.asarray(values, dtype=float)
    scale = 10.0 ** digits
    with np.errstate(invalid="ignore", over="ignore"):
        y = x * scale
        out = np.rint(y) / scale + 0.0  # + 0.0 turns -0.0 into 0.0
        finite = np.isfinite(x)
        close = np.abs(y - np.floor(y) - 0.5) <= 2 * np.abs(np.spacing(y))
        risky = finite & (close | ~(np.abs(y) < 2.0 ** 52))
    out[~finite] = np.nan
    for j in np.flatnonzero(risky).tolist():
        out.flat[j] = round(float(x.flat[j]), digits) + 0.0
    return out


def _floats(values, digits: int = 6) -> Cells:
    """``scorecard_json._num`` over an array: rounded doubles, empty where not finite."""
    out = round_like_python(values, digits)
    return Cells(out, np.isnan(out))


def _const(value, n: int) -> Cells:
    """``n`` cells of one value (a Python bool, int or float becomes an array of its own type)."""
    if isinstance(value, (bool, int, float)):
        return Cells(np.full(n, value), const=True)
    return Cells([value] * n, const=True)


def cells_match(a: list, b: list) -> bool:
    """Same cells: same length, and per cell the same type and value (NaN equal to NaN)."""
    return len(a) == len(b) and all(type(x) is type(y) and (x == y or (x != x and y != y)) for x, y in zip(a, b))


def _info_cells(card) -> dict:
    """The cells a filter's JSON entry takes from its record (name, source, input, warnings, ...)."""
    from .scorecard_views import _flatten

    fs, n = card.filters, len(card)
    if len(fs.info) >= n and len(fs.sources) >= n and all(isinstance(s, str) for s in fs.sources[:n]) \
            and all(_PLAIN_INFO.issuperset(info) for info in fs.info[:n]):
        # A sweep's filters: ``scorecard_json.filter_entry`` gives name, source, input (the spec, when set)
        # and warnings (none, an empty cell); no extrapolation, no checksum.
        cols = {"name": Cells(list(fs.names[:n])), "source": Cells(list(fs.sources[:n]))}
        where = [info.get("spec") or None for info in fs.info[:n]]
        if any(w is not None for w in where):
            cols["input"] = Cells(where)
        cols["warnings"] = Cells([""] * n)
        return cols
    bare = dataclasses.replace(card, observers=[], per_observer=[], metrics=())
    flat = []
    for i in range(n):
        f = bare.filter_dict(i)
        f.pop("observers")
        flat.append(_flatten(f))
    keys = list(dict.fromkeys(k for f in flat for k in f))
    return {k: Cells([f.get(k) for f in flat]) for k in keys}


def _filter_cells(card) -> dict:
    """Per filter (over the chunk's filters, not yet repeated over observers): the cells of
    ``scorecard_json.filter_entry`` without its observers, flattened as ``csv_rows`` flattens them."""
    from .metrics.road_use import SIGNAL_COLOURS, road_use_reasons_many

    cols = _info_cells(card)
    r, groups = card.results, card.metrics
    if "photometry" in groups:
        cols["luminous_transmittance"] = _floats(r["luminous_transmittance"])
        cols["luminous_transmittance_illuminant"] = _floats(r["luminous_transmittance_illuminant"])
        xy = np.asarray(r["chromaticity"], dtype=float).reshape(len(card), 2)
        cols["chromaticity.x"] = _floats(xy[:, 0])
        cols["chromaticity.y"] = _floats(xy[:, 1])
        cols["white_shift"] = _floats(r["white_shift"])
    if "road_use" in groups:
        cat = np.asarray(r["iso12312_category"]).astype(np.int64)
        cols["iso12312_category"] = Cells(cat, cat < 0)
        cols["road_use.suitable"] = Cells(np.asarray(r["suitable"]).astype(bool))
        cols["road_use.night_suitable"] = Cells(np.asarray(r["night_suitable"]).astype(bool))
        cols["road_use.min_ratio_475_650"] = _floats(r["min_ratio"], 4)
        cols["road_use.min_ratio_at_nm"] = _floats(r["min_ratio_at_nm"], 2)
        reasons = road_use_reasons_many(
            np.asarray(r["luminous_transmittance"], dtype=float), cat, np.asarray(r["min_ratio"], dtype=float),
            np.asarray(r["min_ratio_at_nm"], dtype=float),
            {c: np.asarray(r[f"signal_quotient_{c}"], dtype=float) for c in SIGNAL_COLOURS},
            {c: r[f"signal_light_{c}"] for c in SIGNAL_COLOURS}, limits=card.settings.get("signal_limits"))
        cols["road_use.reasons"] = Cells([" ".join(s) for s in reasons])
        for c in SIGNAL_COLOURS:
            cols[f"signal_quotients.{c}"] = _floats(r[f"signal_quotient_{c}"], 4)
    if "rendition" in groups:
        for key in ("rf", "rg", "ra"):
            cols[f"rendition.{key}"] = _floats(r[key], 2)
        shifts = np.asarray(r["chroma_shifts"], dtype=float).reshape(len(card), -1)
        for j in range(shifts.shape[1]):
            cols[f"rendition.chroma_shifts.{j + 1}"] = _floats(shifts[:, j], 2)
        cols["rendition.cct_k"] = _floats(r["cct_k"], 1)
        cols["rendition.duv"] = _floats(r["duv"], 5)
    return cols


def _observer_cells(card, k: int) -> dict:
    """The cells of fixed observer ``k`` over the filters (``scorecard_json.observer_entry`` flattened; pair
    statistics empty where the filter leaves a cone no light)."""
    from .scorecard_json import _at_key, _num

    o, n, st, groups = card.per_observer[k], len(card), card.settings, card.metrics

    def ints(key):
        return Cells(np.asarray(o[key]).astype(np.int64))

    cols: dict = {"observer": Cells([card.observers[k].spec] * n)}
    if "contrast" in groups:
        for key in ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain"):
            cols[key] = _floats(o[key])
    masked: dict = {}
    if "discrimination" in groups:
        masked["discriminable_pairs.threshold_jnd"] = _const(st["discrimination_threshold"], n)
        for key in PAIR_KEYS:
            masked[f"discriminable_pairs.{key}"] = ints(f"discriminable_{key}")
        for t in st["distribution_thresholds"]:
            for key in PAIR_KEYS:
                masked[f"delta_s_distribution.{_at_key(t)}.{key}"] = ints(f"discriminable_at_{t:g}_{key}")
        masked["delta_s_distribution.median_without"] = _const(_num(o["discriminable_median_without"], 4), n)
        masked["delta_s_distribution.median_with"] = _floats(o["discriminable_median_with"], 4)
        masked["delta_s_distribution.median_ratio"] = _floats(o["discriminable_median_ratio"])
    if "confusion" in groups and o.get("confusion_with") is not None:
        masked["confusion_pairs.normal_threshold_jnd"] = _const(st["normal_threshold"], n)
        masked["confusion_pairs.deficient_threshold_jnd"] = _const(st["deficient_threshold"], n)
        masked["confusion_pairs.normally_discriminable"] = _const(int(o["confusion_normally_discriminable"]), n)
        for key in CONFUSION_KEYS:
            masked[f"confusion_pairs.{key}"] = ints(f"confusion_{key}")
        masked["confusion_pairs.median_delta_s_without"] = _const(_num(o["confusion_median_without"], 4), n)
        masked["confusion_pairs.median_delta_s_with"] = _floats(o["confusion_median_with"], 4)
        masked["confusion_pairs.median_delta_s_ratio"] = _floats(o["confusion_median_ratio"])
    if "undefined" in o and np.any(o["undefined"]):
        undefined = np.asarray(o["undefined"], dtype=bool)
        masked = {c: cells.masked(undefined) for c, cells in masked.items()}
    cols.update(masked)
    return cols


def _interleave(pieces: list, n: int) -> Cells:
    """Observer columns (each over ``n`` filters, None where an observer lacks the column) as the rows'
    column: filter-major, the observers of a filter in order."""
    present = [p for p in pieces if p is not None]
    k = len(pieces)
    if present and all(isinstance(p.values, np.ndarray) for p in present) \
            and len({p.values.dtype for p in present}) == 1:
        values = np.zeros((n, k), dtype=present[0].values.dtype)
        null = np.zeros((n, k), dtype=bool)
        for j, p in enumerate(pieces):
            if p is None:
                null[:, j] = True
                continue
            values[:, j] = p.values
            if p.null is not None:
                null[:, j] = p.null
        return Cells(values.reshape(-1), null.reshape(-1))
    lists = [p.tolist() if p is not None else [None] * n for p in pieces]
    return Cells([x for row in zip(*lists) for x in row])


def chunk_cells(card, columns: list) -> dict:
    """The CSV view's cells of a scorecard of fixed observers, column by column in ``columns`` (one row per
    filter x observer, filter-major, as ``Scorecard.csv_rows``); a cell a column does not have is empty.

    Raises :class:`InputError` when the filters give a column that ``columns`` (the run's first filters'
    columns) does not have.
    """
    from .scorecard_views import run_columns

    n, n_obs = len(card), len(card.observers)
    per_filter = _filter_cells(card)
    per_obs = [_observer_cells(card, k) for k in range(n_obs)]
    obs_keys = list(dict.fromkeys(c for o in per_obs for c in o))
    run = run_columns(card)
    known = set(columns)
    extra = [c for c in [*per_filter, *obs_keys, *run] if c not in known]
    if extra:
        fs = card.filters
        raise InputError(f"filters {fs.names[0]} to {fs.names[-1]} give columns the first filters do not "
                         f"({', '.join(extra[:3])})", hint="score these filters in a separate run")
    rows = n * n_obs
    out = {}
    for c in columns:  # a row is {**filter, **observer, **run}: the later wins, as in csv_rows
        if c in run:
            out[c] = _const(run[c], rows)
        elif c in obs_keys:
            out[c] = _interleave([o.get(c) for o in per_obs], n)
        elif c in per_filter:
            out[c] = per_filter[c].repeat(n_obs)
        else:
            out[c] = Cells([None] * rows)
    return out


def csv_lines(cells: list) -> str:
    """CSV rows (``\\n`` line ends, as ``tables.csv_text`` writes them) of the columns ``cells``.

    The CSV writer quotes every cell; this gives it each text once where rows repeat it. The run's columns
    come last and hold one value each: they are written once and appended to every line (caveat and
    cautions included). The filters' columns come first, each value repeated over the filter's observer
    rows: they are written once per filter and each line joined with its rows' observer cells. When a cell
    holds a line break every cell goes through the writer row by row.
    """
    tail = len(cells)
    while tail > 0 and cells[tail - 1].const:
        tail -= 1
    n = len(cells[0]) if cells else 0
    if tail < 2 or len(cells) - tail < 2 or n == 0 or any(c.csv_text() for c in cells):
        return _csv_rows(cells)
    suffix = "," + _csv_rows([Cells(c.tolist()[:1]) for c in cells[tail:]])  # one line, "\n" at its end
    per = cells[0].per
    head = 0
    while head < tail and cells[head].base is not None and cells[head].per == per:
        head += 1
    if per < 2 or head < 2 or tail - head < 2:
        return _csv_rows(cells[:tail]).replace("\n", suffix)
    filters = _csv_rows([c.base for c in cells[:head]]).split("\n")[:-1]
    rows = _csv_rows(cells[head:tail]).split("\n")[:-1]
    repeated = itertools.chain.from_iterable(zip(*[filters] * per))
    return "".join([f"{f},{r}{suffix}" for f, r in zip(repeated, rows)])


def _csv_rows(cells: list) -> str:
    import csv

    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(zip(*(c.csv_values() for c in cells)))
    return buf.getvalue()
