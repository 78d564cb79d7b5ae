"""Read hyperspectral cubes: ``.npy``, ``.npz`` and multi-page TIFF.

A cube is an array of spectra on a grid of pixels, shape (height, width,
bands), with one wavelength (nm) per band. Bands may also come first
(bands, height, width), as in a multi-page TIFF with one page per band; the
reader moves them last.

Where the wavelengths come from, first found wins:

1. the caller (``wavelengths=``; on the command line ``--wavelengths 400:700:10``
   or ``--wavelengths 400,410,420``);
2. inside the file: the ``wavelengths`` array of an ``.npz``; for TIFF, a
   ``wavelengths`` list in tifffile's JSON metadata (ImageDescription);
3. a sidecar file beside the cube: ``NAME.wavelengths.json`` (``{"wavelengths":
   [...], "kind": "reflectance"}``) or ``NAME.wavelengths.txt`` (numbers
   separated by commas, spaces or new lines).

What the values mean (``kind``): ``reflectance`` (fractions 0-1, lit by the
chosen illuminant) or ``radiance`` (the light reaching the eye, any units,
already including the scene's illuminant). Taken from the caller, else from
the file (``kind`` in the ``.npz``, the TIFF metadata or the JSON sidecar),
else **reflectance is assumed** and the cube says so in ``kind_source``.

Files are loaded with ``allow_pickle=False`` always: a cube file never runs code.

Public: :class:`Cube`, :func:`read_cube`, :func:`parse_wavelengths`, :func:`is_cube_path`,
:data:`CUBE_KINDS`, :data:`CUBE_SUFFIXES`.
"""

from __future__ import annotations

import json
import pathlib
import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .cube_files import _load, _npy_header, _npz_plan, _tiff_plan

__all__ = ["Cube", "read_cube", "parse_wavelengths", "is_cube_path", "tiff_is_cube", "tiff_has_wavelengths",
           "CUBE_KINDS", "CUBE_SUFFIXES"]

CUBE_KINDS = ("reflectance", "radiance")
CUBE_SUFFIXES = (".npy", ".npz")
#: The band every cube should cover; outside it the renderer extrapolates
#: (common practice: cone fundamentals carry almost all their weight in 400-700 nm).
COVER_NM = (400.0, 700.0)


@dataclass
class Cube:
    """A hyperspectral cube.

    Attributes
    ----------
    data : numpy.ndarray
        Spectra, shape (height, width, bands); float or integer; may be a
        read-only memory map (``.npy``).
    wavelengths : numpy.ndarray
        Band centres, nm, shape (bands,), strictly increasing.
    kind : str
        ``reflectance`` (fraction 0-1) or ``radiance`` (any units).
    path : str or None
    wavelength_source : str
        ``argument``, ``file``, ``sidecar PATH``.
    kind_source : str
        ``argument``, ``file``, ``sidecar`` or ``assumed``.
    warnings : list of str
    max_value : float
        The largest value (set on creation, when every value is checked; ``-inf`` for integers).

    Raises
    ------
    InputError
        Bad shape or wavelengths, or any NaN or infinite value.
    """

    data: np.ndarray
    wavelengths: np.ndarray
    kind: str = "reflectance"
    path: str | None = None
    wavelength_source: str = "argument"
    kind_source: str = "argument"
    warnings: list = field(default_factory=list)

    def __post_init__(self) -> None:
        src = self.path or "cube"
        data = self.data
        wl = np.asarray(self.wavelengths, dtype=float).ravel()
        if data.ndim != 3:
            raise InputError(f"a cube must be 3-D (height, width, bands), got shape {data.shape}", source=src)
        if data.shape[-1] != len(wl):
            if data.shape[0] == len(wl):
                data = np.moveaxis(data, 0, -1)
            else:
                raise InputError(f"{len(wl)} wavelengths do not match the cube's shape {data.shape}", source=src,
                                 hint="the band axis must come last (or first)")
        _check_wavelengths(wl, src)
        if self.kind not in CUBE_KINDS:
            raise InputError(f"cube kind '{self.kind}' is not reflectance or radiance", source=src)
        if not (np.issubdtype(data.dtype, np.floating) or np.issubdtype(data.dtype, np.integer)):
            raise InputError(f"unsupported cube sample type {data.dtype}", source=src)
        self.data = data
        self.wavelengths = wl
        # Every value, not a sample: one NaN would otherwise render as a black pixel.
        self.max_value = -np.inf
        if np.issubdtype(data.dtype, np.floating):
            bad, self.max_value = _scan_values(data)
            if bad:
                raise InputError(f"cube holds {bad} NaN or infinite value(s)", source=src,
                                 hint="replace them (e.g. with 0 for no signal) before rendering")

    @property
    def height(self) -> int:
        return self.data.shape[0]

    @property
    def width(self) -> int:
        return self.data.shape[1]

    @property
    def bands(self) -> int:
        return self.data.shape[2]


def _check_wavelengths(wl: np.ndarray, src: str) -> None:
    if len(wl) < 3:
        raise InputError(f"a cube needs at least 3 bands, got {len(wl)}", source=src)
    if not np.all(np.isfinite(wl)) or np.any(np.diff(wl) <= 0):
        raise InputError("wavelengths must be finite and strictly increasing", source=src)
    if wl[0] < 200 or wl[-1] > 2500:
        raise InputError(f"wavelengths {wl[0]:g}-{wl[-1]:g} are not in nm (expected within 200-2500)", source=src)
    if wl[-1] - wl[0] < 100:
        raise InputError(f"wavelengths span only {wl[0]:g}-{wl[-1]:g} nm; rendering needs the visible band",
                         source=src)


def parse_wavelengths(text) -> np.ndarray:
    """Wavelengths from ``START:STOP:STEP`` (inclusive) or a list ``400,410,420``, nm.

    Examples
    --------
    >>> parse_wavelengths("400:700:100").tolist()
    [400.0, 500.0, 600.0, 700.0]
    >>> parse_wavelengths("450, 550 650").tolist()
    [450.0, 550.0, 650.0]
    """
    if not isinstance(text, str):
        return np.asarray(text, dtype=float).ravel()
    t = text.strip()
    m = re.fullmatch(r"\s*([0-9.eE+-]+)\s*:\s*([0-9.eE+-]+)\s*:\s*([0-9.eE+-]+)\s*", t)
    try:
        if m:
            start, stop, step = (float(x) for x in m.groups())
            if step <= 0 or stop <= start:
                raise InputError("wavelength range needs STOP > START and STEP > 0", source=text)
            n = int(round((stop - start) / step)) + 1
            if abs(start + (n - 1) * step - stop) > 1e-6 * max(1.0, step):
                raise InputError("wavelength range is not a whole number of steps", source=text)
            return start + step * np.arange(n)
        parts = [p for p in re.split(r"[,\s;]+", t) if p]
        return np.array([float(p) for p in parts])
    except ValueError:
        raise InputError("wavelengths are not numbers", source=text,
                         hint="give START:STOP:STEP (e.g. 400:700:10) or a list 400,410,...") from None


def is_cube_path(path) -> bool:
    """True for ``.npy`` and ``.npz`` files (TIFF cubes are recognised by their wavelengths)."""
    return pathlib.Path(path).suffix.lower() in CUBE_SUFFIXES


def tiff_is_cube(path, *, wavelengths_given: bool = False) -> bool:
    """Whether a TIFF is read as a cube: it names its wavelengths, or (with wavelengths given by the
    caller) it has an axis besides height and width with more than 4 entries (pages or samples).
    RGB(A) TIFFs stay images."""
    if tiff_has_wavelengths(path):
        return True
    if not wavelengths_given:
        return False
    import tifffile

    try:
        with tifffile.TiffFile(path) as tif:
            series = tif.series[0]
            return any(ax not in "YX" and n > 4 for ax, n in zip(series.axes, series.shape))
    except (tifffile.TiffFileError, OSError, ValueError, EOFError, KeyError, IndexError):
        return False  # not a readable TIFF: the image reader will say why


def tiff_has_wavelengths(path) -> bool:
    """True if a TIFF carries a ``wavelengths`` list in its JSON metadata (a cube), read from the header only."""
    import tifffile

    if not pathlib.Path(path).is_file():  # never open a pipe or device
        return False
    try:
        with tifffile.TiffFile(path) as tif:
            if tif.shaped_metadata:
                return "wavelengths" in tif.shaped_metadata[0]
            desc = tif.pages.first.description
            return desc.lstrip().startswith("{") and "wavelengths" in json.loads(desc)
    except (tifffile.TiffFileError, OSError, ValueError, EOFError, KeyError, IndexError, TypeError):
        return False  # not a readable TIFF (or its description is not our JSON): the image reader will say why


def _sidecar(p: pathlib.Path) -> tuple[np.ndarray | None, str | None, str | None]:
    stem = p.with_suffix("")
    js = stem.with_name(stem.name + ".wavelengths.json")
    txt = stem.with_name(stem.name + ".wavelengths.txt")
    if js.is_file():
        try:
            obj = json.loads(js.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise InputError(f"cannot read sidecar ({exc})", source=str(js)) from None
        if isinstance(obj, list):
            obj = {"wavelengths": obj}
        if not isinstance(obj, dict) or "wavelengths" not in obj:
            raise InputError("sidecar needs a 'wavelengths' list", source=str(js))
        try:
            wl = np.asarray(obj["wavelengths"], dtype=float)
        except (TypeError, ValueError):
            raise InputError("sidecar wavelengths are not numbers", source=str(js)) from None
        return wl, obj.get("kind"), f"sidecar {js}"
    if txt.is_file():
        try:
            wl = parse_wavelengths(txt.read_text(encoding="utf-8"))
        except InputError as exc:
            raise InputError(exc.message, source=str(txt), hint=exc.hint) from None
        return wl, None, f"sidecar {txt}"
    return None, None, None


def _kind(value, src: str) -> str:
    k = str(value).strip().lower()
    if k not in CUBE_KINDS:
        raise InputError(f"cube kind '{value}' is not reflectance or radiance", source=src)
    return k


def _check_declared(shape: tuple, wl: np.ndarray, max_megapixels: float | None, src: str) -> None:
    """Check a cube's declared shape (from its header) against the wavelengths and the size limit."""
    if len(shape) != 3:
        raise InputError(f"a cube must be 3-D (height, width, bands), got shape {shape}", source=src)
    if shape[-1] == len(wl):
        h, w = shape[0], shape[1]
    elif shape[0] == len(wl):
        h, w = shape[1], shape[2]
    else:
        raise InputError(f"{len(wl)} wavelengths do not match the cube's shape {shape}", source=src,
                         hint="the band axis must come last (or first)")
    if max_megapixels is not None:
        from .images import check_size

        check_size(w, h, max_megapixels, src)


def read_cube(path, *, wavelengths=None, kind: str | None = None, max_megapixels: float | None = None) -> Cube:
    """Read a hyperspectral cube (see the module docstring for where wavelengths and kind come from).

    The declared shape (the ``.npy`` header, the ``.npz`` member's header inside the zip, the TIFF's
    tags) is checked against the wavelengths and ``max_megapixels`` before any data is decompressed or
    allocated; then every value is checked (NaN or infinite values are refused).

    Parameters
    ----------
    path : str or path-like
        ``.npy``, ``.npz`` or ``.tif``/``.tiff``; a regular file (a pipe or device is refused).
    wavelengths : str or array_like, optional
        Band wavelengths, nm (overrides the file's).
    kind : str, optional
        ``reflectance`` or ``radiance`` (overrides the file's).
    max_megapixels : float, optional
        Refuse cubes with more pixels (height x width) than this, in megapixels.

    Returns
    -------
    Cube
    """
    from .images import regular_file

    p = pathlib.Path(path)
    src = str(p)
    regular_file(p)
    suffix = p.suffix.lower()
    member, shape, file_wl, file_kind = _declared(p, suffix, src)
    wl, wl_src, k, k_src = _wavelengths_and_kind(p, src, wavelengths, kind, file_wl, file_kind)
    _check_declared(shape, wl, max_megapixels, src)
    data = _load(p, suffix, src, member, shape)
    if tuple(data.shape) != tuple(shape):
        raise InputError(f"data shape {data.shape} differs from the declared {shape}", source=src)
    cube = Cube(data, wl, k, src, wl_src, k_src)
    cube.warnings.extend(_value_warnings(cube))
    return cube


def _declared(p: pathlib.Path, suffix: str, src: str) -> tuple:
    """(npz member or None, declared shape, the file's wavelengths or None, the file's kind or None), from the
    headers alone."""
    if suffix == ".npy":
        try:
            with open(p, "rb") as fh:
                shape, _ = _npy_header(fh, src, "array")
        except OSError as exc:
            raise InputError(f"cannot read the cube ({exc.strerror})", source=src) from None
        return None, shape, None, None
    if suffix == ".npz":
        member, shape, _, file_wl, file_kind = _npz_plan(p, src)
        return member, shape, file_wl, file_kind
    if suffix in (".tif", ".tiff"):
        shape, file_wl, file_kind = _tiff_plan(p, src)
        return None, shape, file_wl, file_kind
    raise InputError(f"unsupported cube type '{p.suffix}'", source=src, hint="use .npy, .npz or TIFF")


def _wavelengths_and_kind(p: pathlib.Path, src: str, wavelengths, kind, file_wl, file_kind) -> tuple:
    """(wavelengths, where from, kind, where from): the argument, else the file, else a sidecar."""
    side_wl, side_kind, side_src = _sidecar(p)
    if wavelengths is not None:
        wl, wl_src = parse_wavelengths(wavelengths), "argument"
    elif file_wl is not None:
        wl, wl_src = file_wl.ravel(), "file"
    elif side_wl is not None:
        wl, wl_src = side_wl.ravel(), str(side_src)
    else:
        raise InputError("no wavelengths for the cube's bands", source=src,
                         hint="give --wavelengths START:STOP:STEP, a 'wavelengths' array in the .npz, "
                              f"or a sidecar {p.with_suffix('').name}.wavelengths.txt")
    if kind is not None:
        k, k_src = _kind(kind, src), "argument"
    elif file_kind is not None:
        k, k_src = _kind(file_kind, src), "file"
    elif side_kind is not None:
        k, k_src = _kind(side_kind, src), "sidecar"
    else:
        k, k_src = "reflectance", "assumed"
    return wl, wl_src, k, k_src


def _value_warnings(cube: Cube) -> list:
    out = []
    src = cube.path or "cube"
    wl = cube.wavelengths
    if wl[0] > COVER_NM[0] or wl[-1] < COVER_NM[1]:
        fill = "held at the end values" if cube.kind == "reflectance" else "taken as zero"
        out.append(f"{src}: bands cover {wl[0]:g}-{wl[-1]:g} nm, not all of {COVER_NM[0]:g}-{COVER_NM[1]:g} nm; "
                   f"outside them the spectra are {fill}")
    if cube.kind_source == "assumed":
        out.append(f"{src}: no kind given; the values are assumed to be reflectance (0-1)")
    if cube.kind == "reflectance" and not np.issubdtype(cube.data.dtype, np.floating):
        raise InputError(f"integer values ({cube.data.dtype}) cannot be reflectance fractions", source=src,
                         hint="store reflectance as floats 0-1, or read the cube as --cube-kind radiance")
    if np.issubdtype(cube.data.dtype, np.floating):
        top = cube.max_value  # found while checking every value (Cube.__post_init__)
        if cube.kind == "reflectance" and top > 1.5:
            out.append(f"{src}: reflectance values reach {top:.3g}; expected 0-1 "
                       "(percent? radiance? use --cube-kind radiance)")
    return out


#: Values checked per block by :func:`_scan_values` (bounded extra memory for memory-mapped cubes).
_SCAN_BLOCK = 1 << 22


def _scan_values(data: np.ndarray) -> tuple[int, float]:
    """Count NaN/infinite values and find the largest finite value, over every value, block by block.

    Returns
    -------
    (int, float)
        Non-finite count, maximum (``-inf`` for an empty cube).
    """
    rows = max(1, _SCAN_BLOCK // max(1, data.shape[1] * data.shape[2]))
    bad, top = 0, -np.inf
    for r0 in range(0, data.shape[0], rows):  # blocks of rows, vectorised inside
        block = np.asarray(data[r0:r0 + rows])
        finite = np.isfinite(block)
        n_bad = block.size - int(np.count_nonzero(finite))
        bad += n_bad
        if block.size:
            top = max(top, float(block.max() if n_bad == 0 else np.max(block, where=finite, initial=-np.inf)))
    return bad, top
