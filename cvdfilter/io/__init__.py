"""Input and output: spectra files and their units, images (headers, decoding, writing), cubes and atomic
writes.

Public names are exported here lazily (imported on first use, so ``cvdfilter --help`` stays fast); each
lives in the submodule :data:`_LAZY` names.
"""

from __future__ import annotations

from .._lazy import lazy_exports

_LAZY = {
    "SpectraTable": ".spectra_files",
    "read_spectra": ".spectra_files",
    "parse_spectra_text": ".spectra_files",
    "header_units": ".spectra_units",
    "possible_units": ".spectra_units",
    "ImageData": ".images",
    "read_image": ".images",
    "ImageHeader": ".image_headers",
    "image_header": ".image_headers",
    "read_metadata": ".image_headers",
    "regular_file": ".image_headers",
    "write_image": ".image_writers",
    "encode_png": ".image_writers",
    "Cube": ".cubes",
    "read_cube": ".cubes",
    "parse_wavelengths": ".cubes",
    "atomic_path": ".atomic",
    "write_bytes": ".atomic",
    "write_text": ".atomic",
    "check_outputs": ".atomic",
    "check_writable": ".atomic",
}

__all__ = list(_LAZY)

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
