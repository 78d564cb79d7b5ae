"""Rendering to files: output names and sample types, panels' captions, fingerprints for resuming, and
:func:`render_file` (one input file to its rendered views, written atomically with their metadata).

What ``cvdfilter render`` runs per input (in worker processes with ``--jobs``); the pixels come from
:class:`cvdfilter.rendering.Renderer`. :mod:`cvdfilter.rendering` re-exports the public names.

Public: :func:`render_file`, :func:`output_suffix`, :func:`output_dtype`, :func:`panel_titles`,
:func:`panel_footer`, :func:`file_checksum`, :func:`settings_fingerprint`, :func:`output_fingerprint`,
:func:`read_render_input`.
"""

from __future__ import annotations

import pathlib
from collections.abc import Callable

import numpy as np

from ..errors import InputError
from .renderer import Renderer
from .views import OUTPUT_FORMATS, VIEW_TITLES, VIEWS

__all__ = ["render_file", "output_suffix", "output_dtype", "panel_titles", "panel_footer", "file_checksum",
           "settings_fingerprint", "output_fingerprint", "read_render_input"]


def output_suffix(fmt: str, input_path) -> str:
    """The suffix of an output file for ``fmt`` (one of :data:`OUTPUT_FORMATS`) and an input path."""
    if fmt not in OUTPUT_FORMATS:
        raise InputError(f"unknown output format '{fmt}'", hint="use " + ", ".join(OUTPUT_FORMATS))
    if fmt == "auto":
        return ".tif" if pathlib.Path(input_path).suffix.lower() in (".tif", ".tiff") else ".png"
    if fmt == "jpeg":
        return ".jpg"
    return ".png" if fmt.startswith("png") else ".tif"


def output_dtype(fmt: str, pixels_dtype, *, cube: bool = False) -> np.dtype:
    """The output sample type for ``fmt`` given the input's (cubes: 8-bit unless forced)."""
    src = np.dtype(np.uint8) if cube else np.dtype(pixels_dtype)
    forced = {"png8": np.uint8, "png16": np.uint16, "tiff8": np.uint8, "tiff16": np.uint16,
              "tiff-float": np.float32, "jpeg": np.uint8}
    if fmt in forced:
        return np.dtype(forced[fmt])
    if src.kind == "f":
        return np.dtype(np.float32) if (fmt == "tiff" or (fmt == "auto" and not cube)) else np.dtype(np.uint16)
    return src


def panel_titles(renderer: Renderer) -> dict:
    """Panel captions for a renderer's settings (the observer by its readable label)."""
    from ..observers.labels import observer_label

    obs = observer_label(renderer.observer)
    flt = renderer.filter_name or "no filter"
    return {v: t.format(observer=obs, filter=flt) for v, t in VIEW_TITLES.items()}


def panel_footer(renderer: Renderer) -> str:
    """Settings and the caveat, for a panel's footer."""
    d = renderer.describe()
    light = f"illuminant {d['illuminant']}" if d["illuminant"] else d["scene"]
    a = d["adaptation"]
    adapt = "full" if a == 1 else "none" if a == 0 else f"{a:g}"
    return (f"filter {d['filter'] or 'none'}; {light}; adaptation {adapt}; simulation {d['simulation']}; "
            f"gamut {d['gamut']}. {d['caveat']}")


def _small(px: np.ndarray, max_pixels: int = 1200) -> np.ndarray:
    step = max(1, int(np.ceil(max(px.shape[:2]) / max_pixels)))
    return px[::step, ::step].copy()  # a copy: the full-size buffer is reused for the next view


def file_checksum(path) -> str:
    """SHA-256 of a file's bytes, hex (read in blocks; a pipe or device is refused)."""
    from ..io.checksum import file_sha256
    from ..io.images import regular_file

    p = regular_file(path)
    try:
        return file_sha256(p)
    except OSError as exc:
        raise InputError(f"cannot read ({exc.strerror or exc})", source=str(p)) from None


def _digest(obj) -> str:
    import hashlib
    import json

    return hashlib.sha256(json.dumps(obj, sort_keys=True, separators=(",", ":")).encode("utf-8")).hexdigest()


def settings_fingerprint(renderer: Renderer, *, fmt: str = "auto", cube_kind: str | None = None,
                         wavelengths=None) -> str:
    """A SHA-256 over everything that decides a rendered file, except the input and the view.

    It covers the renderer's settings (:meth:`Renderer.describe`, which includes the tool's version),
    the numbers behind them (the filter's transmittance, the illuminant, both observers' fundamentals,
    the scene's stimuli and display matrix, so that an edited filter file with the same name changes
    it), the output format, the cube kind and the cube wavelengths. ``--max-megapixels`` and ``--jobs``
    do not change a file and are left out.
    """
    import hashlib

    arrays = hashlib.sha256()
    for a in (renderer.transmittance, renderer.illuminant.spd, renderer.observer.fundamentals,
              renderer.normal.fundamentals, renderer.stimuli, renderer.display, renderer.grid.wavelengths):
        a = np.ascontiguousarray(np.asarray(a, dtype=np.float64))
        arrays.update(str(a.shape).encode())
        arrays.update(a.tobytes())
    wl = None if wavelengths is None else [float(w) for w in np.asarray(wavelengths, dtype=float).ravel()]
    settings = {k: v for k, v in renderer.describe().items()}
    return _digest({"settings": settings, "arrays": arrays.hexdigest(), "format": fmt, "cube_kind": cube_kind,
                    "wavelengths": wl})


def output_fingerprint(settings_fp: str, input_sha256: str, view: str) -> str:
    """The fingerprint of one output file: settings, the input's checksum and the view (or ``panel``)."""
    return _digest({"settings": settings_fp, "input": input_sha256, "view": view})


def render_file(path, renderer: Renderer, *, outputs: dict, panel_path=None, fmt: str = "auto",
                cube_kind: str | None = None, wavelengths=None, max_megapixels: float | None = None,
                inputs=(), fingerprints: dict | None = None, input_sha256: str | None = None) -> dict:
    """Render one image or cube file to the requested views (and a panel), writing each atomically.

    Parameters
    ----------
    path : str or path-like
        Input image (PNG, JPEG, TIFF) or cube (``.npy``, ``.npz``, TIFF with wavelengths).
    renderer : Renderer
    outputs : dict
        View name -> output path (written in this order).
    panel_path : path, optional
        Where to write the 2x2 panel (PNG).
    fmt : str
        One of :data:`OUTPUT_FORMATS` (decides the sample type).
    cube_kind, wavelengths
        For cubes (see :func:`cvdfilter.io.cubes.read_cube`).
    max_megapixels : float, optional
        Refuse larger inputs.
    inputs : iterable of paths
        Paths no output may overwrite (all inputs of a batch).
    fingerprints : dict, optional
        View (or ``panel``) -> fingerprint (:func:`output_fingerprint`), stored in each file's
        metadata (``cvdfilter`` record, key ``fingerprint``) so that a later batch can tell whether
        the file was made with the same settings and input.
    input_sha256 : str, optional
        The input's checksum, stored in the metadata too.

    Returns
    -------
    dict
        ``input``, ``kind`` (image or cube), ``width``, ``height``, ``outputs``
        (view -> path), ``panel``, ``clipped_pixels`` (view -> count),
        ``fingerprints`` (view or ``panel`` -> fingerprint, those given), ``warnings``.
    """
    from .._version import __version__
    from ..io.cubes import Cube
    from ..io.images import write_image

    p = pathlib.Path(path)
    data = read_render_input(p, cube_kind=cube_kind, wavelengths=wavelengths, max_megapixels=max_megapixels)
    cube = isinstance(data, Cube)
    guard = [str(x) for x in inputs] + [str(p)]
    settings = renderer.describe()
    fps = dict(fingerprints or {})
    record, out_dtype = _input_record(p, data, fmt)
    if input_sha256 is not None:
        record["input_sha256"] = input_sha256
    encoding = "srgb" if out_dtype.kind == "u" else "linear"
    small = {}
    buffer = None
    views = list(outputs)
    for v in views:
        arr, clipped = _render_view(renderer, data, v, out_dtype, buffer,
                                    in_place_ok=len(views) == 1 and panel_path is None, encoding=encoding)
        buffer = None if cube else arr
        record["clipped_pixels"][v] = clipped
        meta = {"Software": f"cvdfilter {__version__}",
                "cvdfilter": {**settings, "view": v, "input": str(p), "clipped_pixels": clipped,
                              "encoding": "sRGB" if encoding == "srgb" else "linear sRGB (no transfer function)",
                              "format": fmt, **_stamp(fps, v, input_sha256)}}
        write_image(outputs[v], arr, encoding=encoding, metadata=meta, inputs=guard)
        record["outputs"][v] = str(outputs[v])
        if v in fps:
            record["fingerprints"][v] = fps[v]
        if panel_path is not None:
            small[v] = _small(arr)
    if panel_path is not None:
        meta = {"cvdfilter": {**settings, "view": "panel", "input": str(p), "format": "png",
                              **_stamp(fps, "panel", input_sha256)}}
        _write_panel(panel_path, renderer, data, small, buffer, out_dtype=out_dtype, metadata=meta, inputs=guard)
        record["panel"] = str(panel_path)
        if "panel" in fps:
            record["fingerprints"]["panel"] = fps["panel"]
    return record


def _stamp(fps: dict, key: str, input_sha256: str | None) -> dict:
    """What a file's metadata records of its fingerprint and its input's checksum (those known)."""
    extra = {"fingerprint": fps[key]} if key in fps else {}
    if input_sha256 is not None:
        extra["input_sha256"] = input_sha256
    return extra


def _input_record(p: pathlib.Path, data, fmt: str) -> tuple[dict, np.dtype]:
    """The record of one input (what it is, its size) and the sample type its outputs get."""
    from ..io.cubes import Cube

    cube = isinstance(data, Cube)
    record: dict = {"input": str(p), "kind": "cube" if cube else "image", "outputs": {}, "panel": None,
              "clipped_pixels": {}, "fingerprints": {}, "warnings": list(data.warnings)}
    if cube:
        record.update(width=data.width, height=data.height, cube_kind=data.kind, cube_kind_source=data.kind_source,
                      wavelengths=f"{data.wavelengths[0]:g}-{data.wavelengths[-1]:g} nm, {data.bands} bands")
        return record, output_dtype(fmt, None, cube=True)
    px = data.pixels
    record.update(width=px.shape[1], height=px.shape[0], bits=data.bits, channels=data.channels)
    if fmt == "jpeg" and data.has_alpha:
        raise InputError("has an alpha channel, which JPEG cannot hold", source=str(p),
                         hint="use --format png or tiff")
    return record, output_dtype(fmt, px.dtype)


def _render_view(renderer: Renderer, data, view: str, out_dtype: np.dtype, buffer, *, in_place_ok: bool,
                 encoding: str) -> tuple[np.ndarray, int]:
    """One view of a cube, or of an image into ``buffer`` (or in place, when the only output allows it)."""
    from ..io.cubes import Cube

    if isinstance(data, Cube):
        return renderer.apply_cube(data, view, dtype=out_dtype)
    px = data.pixels
    in_place = (in_place_ok and view != "original" and px.ndim == 3 and px.shape[2] in (3, 4)
                and px.dtype == out_dtype and px.flags.writeable and data.encoding == encoding)
    return renderer.apply(data, view, dtype=out_dtype, out=px if in_place else buffer)


def read_render_input(p: pathlib.Path, *, cube_kind, wavelengths, max_megapixels):
    """An input file as a Cube (cube files, TIFF cubes) or ImageData: the one place that tells them apart."""
    from ..io.cubes import is_cube_path, read_cube, tiff_is_cube
    from ..io.images import DEFAULT_MAX_MEGAPIXELS, read_image

    mp = DEFAULT_MAX_MEGAPIXELS if max_megapixels is None else max_megapixels
    tif = p.suffix.lower() in (".tif", ".tiff")
    if is_cube_path(p) or (tif and tiff_is_cube(p, wavelengths_given=wavelengths is not None)):
        return read_cube(p, wavelengths=wavelengths, kind=cube_kind, max_megapixels=mp)
    return read_image(p, max_megapixels=mp)


def _write_panel(panel_path, renderer: Renderer, data, small: dict, buffer, *, out_dtype, metadata: dict,
                 inputs) -> None:
    """The 2x2 panel of every view: ``small`` holds the views already rendered (reduced); the rest are
    rendered here (into ``buffer`` for images)."""
    from ..io.atomic import write_bytes
    from ..io.cubes import Cube

    cube = isinstance(data, Cube)
    titles = panel_titles(renderer)
    if not cube:
        titles["original"] = "original"
    for v in VIEWS:
        if v not in small:
            arr, _ = (renderer.apply_cube(data, v, dtype=out_dtype) if cube
                      else renderer.apply(data, v, dtype=out_dtype, out=buffer))
            buffer = None if cube else arr
            small[v] = _small(arr)
    ordered = {v: small[v] for v in VIEWS}
    from .. import rendering  # rendering.panel, looked up at call time (figures/render_panel.py)

    draw: Callable[..., bytes] = rendering.panel
    write_bytes(panel_path, draw(ordered, titles=titles, footer=panel_footer(renderer), metadata=metadata),
                inputs=inputs)
