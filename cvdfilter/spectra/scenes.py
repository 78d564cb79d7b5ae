"""Synthetic hyperspectral scenes: natural-scene stand-ins of our own design.

SYNTHETIC DATA. A scene made here is not a photograph of anything: it is a
seeded, deterministic reflectance cube whose spectra and spatial structure
follow simple statistics of natural reflectances and natural images, for
testing and for measures (such as the number of discernible colours) that
need many natural-like colours. Results on it are about the model scene.

Construction (:func:`synthetic_scene`):

1. **Spectra.** The training reflectances are the ``munsell`` set (2,734
   smooth metamers of the Munsell renotation colours) and the ``ces99`` set
   (CIE 224:2017 colour evaluation samples, measured), sampled at the scene's
   bands. A principal-component basis of their reflectances (mean plus the
   first :data:`N_COMPONENTS` components; natural reflectances are well
   described by 3-8 components: Maloney 1986, Parkkinen et al. 1989) gives
   each object its spectrum from the scores of one training sample drawn at
   random, plus Gaussian jitter of :data:`SCORE_JITTER` times each
   component's standard deviation.
2. **Objects.** Regions are the cells of a Voronoi partition of
   ``n_objects`` random centres, with the pixel coordinates warped by 1/f
   noise so that boundaries are irregular.
3. **Texture and shading.** Across the scene, 1/f noise fields (amplitude
   spectrum proportional to 1/f, as in natural images: Field 1987), one per
   component, add :data:`TEXTURE` standard deviations of variation to each
   object's scores, and one more multiplies the reflectance by a shading
   factor between :data:`SHADING` bounds.

Reflectances are clipped to 0-1. The scene is float32, shape (height, width,
bands), on ``bands`` wavelengths (default 31 bands, 400-700 nm at 10 nm, the
sampling of published hyperspectral scene sets).

References
----------
Field, D. J. (1987). Relations between the statistics of natural images and
the response properties of cortical cells. JOSA A 4(12), 2379-2394.
Maloney, L. T. (1986). Evaluation of linear models of surface spectral
reflectance with small numbers of parameters. JOSA A 3(10), 1673-1683.
Parkkinen, J. P. S., Hallikainen, J. & Jaaskelainen, T. (1989). Characteristic
spectra of Munsell colors. JOSA A 6(2), 318-322.

Public: :func:`synthetic_scene`, :func:`write_scene`, :func:`reflectance_basis`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

__all__ = ["synthetic_scene", "write_scene", "reflectance_basis", "N_COMPONENTS", "SCORE_JITTER", "TEXTURE", "SHADING"]

#: Principal components kept (common practice: 6-8 components describe Munsell reflectances well).
N_COMPONENTS = 6
#: Jitter of each object's scores, in standard deviations of each component (a choice of this model).
SCORE_JITTER = 0.15
#: Within-object texture: SD of each score's 1/f field, in standard deviations of that component
#: (a choice of this model: surfaces in natural scenes vary in colour within an object, e.g. foliage).
TEXTURE = 0.25
#: Shading factor range inside an object (a choice of this model: soft shadows, no specular highlights).
SHADING = (0.45, 1.0)
#: Largest scene this generator makes, in pixels (memory: 4 bytes x bands per pixel).
MAX_PIXELS = 16_000_000


def _bands(bands) -> np.ndarray:
    if np.isscalar(bands):
        n = int(bands)
        if n != bands or n < 3:
            raise InputError(f"bands must be a whole number of at least 3, got {bands}")
        return np.linspace(400.0, 700.0, n)
    wl = np.asarray(bands, dtype=float).ravel()
    if len(wl) < 3 or not np.all(np.isfinite(wl)) or np.any(np.diff(wl) <= 0) or wl[0] < 360 or wl[-1] > 830:
        raise InputError("band wavelengths must be at least 3 increasing values within 360-830 nm")
    return wl


def reflectance_basis(wavelengths, n_components: int = N_COMPONENTS) -> dict:
    """Principal-component basis of the ``munsell`` and ``ces99`` reflectances at ``wavelengths``.

    Returns
    -------
    dict
        ``mean`` (n_wl,), ``components`` (n_components, n_wl), ``scores``
        (n_samples, n_components) of the training samples, ``explained``
        (fraction of variance per component).
    """
    from .grid import DEFAULT_GRID
    from .surfaces import surface_set

    wl = np.asarray(wavelengths, dtype=float)
    g = DEFAULT_GRID.wavelengths
    refl = np.concatenate([surface_set("munsell").reflectance, surface_set("ces99").reflectance], axis=1)
    samples = np.stack([np.interp(wl, g, r) for r in refl.T])  # (n_samples, n_wl); a loop over ~2,800 spectra
    mean = samples.mean(axis=0)
    _, s, vt = np.linalg.svd(samples - mean, full_matrices=False)
    comps = vt[:n_components]
    # fix each component's sign (largest weight positive) so the basis does not depend on the SVD routine
    comps = comps * np.sign(comps[np.arange(len(comps)), np.abs(comps).argmax(axis=1)])[:, None]
    return {"mean": mean, "components": comps, "scores": (samples - mean) @ comps.T,
            "explained": (s ** 2 / np.sum(s ** 2))[:n_components]}


def _pink_noise(rng: np.random.Generator, shape: tuple, n: int) -> np.ndarray:
    """``n`` fields of 1/f noise (amplitude ~ 1/f), zero mean, unit SD; shape (n, h, w)."""
    h, w = shape
    fy = np.fft.fftfreq(h)[:, None]
    fx = np.fft.rfftfreq(w)[None, :]
    f = np.hypot(fy, fx)
    f[0, 0] = np.inf
    spec = np.fft.rfft2(rng.standard_normal((n, h, w))) / np.maximum(f, 1.0 / max(h, w))
    spec[:, 0, 0] = 0.0
    field = np.fft.irfft2(spec, s=(h, w))
    return field / field.reshape(n, -1).std(axis=1)[:, None, None]


def synthetic_scene(seed: int = 0, shape: tuple = (256, 256), bands=31, *, n_objects: int | None = None):
    """A synthetic reflectance cube with natural-like spectra and spatial structure (see the module docstring).

    Parameters
    ----------
    seed : int
        Seed of every random draw (the same seed gives the same cube, bit for bit, on one platform).
    shape : tuple of int
        (height, width), pixels.
    bands : int or array_like
        A number of bands evenly spaced over 400-700 nm (default 31: every 10 nm), or band wavelengths, nm.
    n_objects : int, optional
        Number of object regions; default about one per 2,000 pixels, within 8-400.

    Returns
    -------
    cvdfilter.io.cubes.Cube
        ``kind="reflectance"``, float32 data (height, width, bands), ``path=None``.

    Examples
    --------
    >>> c = synthetic_scene(seed=1, shape=(32, 48), bands=16)
    >>> c.data.shape, c.kind
    ((32, 48, 16), 'reflectance')
    """
    from scipy.spatial import cKDTree

    from ..io.cubes import Cube

    try:
        h, w = (int(v) for v in shape)
    except (TypeError, ValueError):
        raise InputError(f"shape must be (height, width), got {shape!r}") from None
    if h < 2 or w < 2 or h * w > MAX_PIXELS:
        raise InputError(f"scene shape {h}x{w} must be at least 2x2 and at most {MAX_PIXELS} pixels")
    wl = _bands(bands)
    seed = int(seed)
    if seed < 0:
        raise InputError(f"seed must be a non-negative whole number, got {seed}")
    if n_objects is None:
        n_objects = int(np.clip(h * w // 2000, 8, 400))
    basis = reflectance_basis(wl)
    k = len(basis["components"])
    sd = basis["scores"].std(axis=0)
    # one stream per quantity, so adding a quantity later never changes the others
    rng_c, rng_w, rng_s, rng_j, rng_t = (np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(5))
    # objects: Voronoi cells of warped coordinates
    centres = rng_c.uniform(0, 1, (n_objects, 2)) * [h, w]
    warp = _pink_noise(rng_w, (h, w), 2) * (0.08 * max(h, w))
    yy, xx = np.mgrid[0:h, 0:w].astype(float)
    coords = np.stack([yy + warp[0], xx + warp[1]], axis=-1).reshape(-1, 2)
    _, label = cKDTree(centres).query(coords)
    # each object's scores: a training sample's scores plus jitter
    pick = rng_s.integers(0, len(basis["scores"]), n_objects)
    obj = basis["scores"][pick] + rng_j.standard_normal((n_objects, k)) * SCORE_JITTER * sd
    # texture: one 1/f field per score (TEXTURE standard deviations of that component) and one for shading
    tex = _pink_noise(rng_t, (h, w), k + 1).reshape(k + 1, -1)
    scores = obj[label] + (TEXTURE * sd)[None, :] * tex[:k].T
    lo, hi = SHADING
    shade = lo + (hi - lo) / (1.0 + np.exp(-1.5 * tex[k]))
    refl = (basis["mean"] + scores @ basis["components"]).clip(0.0, 1.0) * shade[:, None]
    return Cube(refl.reshape(h, w, len(wl)).astype(np.float32), wl, kind="reflectance", path=None,
                wavelength_source="argument", kind_source="argument")


def write_scene(path, cube, *, seed: int | None = None) -> None:
    """Write a cube as ``.npz`` (``cube`` float32, ``wavelengths`` nm, ``kind``, ``note``), atomically.

    The file is what :func:`cvdfilter.io.cubes.read_cube` and the renderer read.
    """
    import io
    import pathlib

    from ..io.atomic import write_bytes

    p = pathlib.Path(path)
    if p.suffix.lower() != ".npz":
        raise InputError("a scene is written as .npz", source=str(p), hint="give an output path ending in .npz")
    note = ("SYNTHETIC reflectance scene made by cvdfilter.synthetic_scene"
            + (f" (seed {seed})" if seed is not None else "") + "; not a photograph of a real scene")
    buf = io.BytesIO()
    np.savez_compressed(buf, cube=np.asarray(cube.data, dtype=np.float32), wavelengths=cube.wavelengths,
                        kind=np.array(cube.kind), note=np.array(note))
    write_bytes(p, buf.getvalue())
