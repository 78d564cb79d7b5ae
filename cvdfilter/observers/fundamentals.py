"""Tabulated colour-matching data taken from colour-science, on the grid.

Public: :func:`cie1931_cmfs`, :func:`cie2015_cmfs`, :func:`tabulated_lms`,
:data:`TABULATED_LMS`, :data:`LMS_TO_XYZ_2DEG`, :data:`LMS_TO_XYZ_10DEG`,
:data:`V_WEIGHTS_2DEG`, :data:`V_WEIGHTS_10DEG`.
"""

from __future__ import annotations

import numpy as np

from ..spectra.cache import cached_arrays
from ..spectra.grid import DEFAULT_GRID, Grid

__all__ = ["cie1931_cmfs", "cie2015_cmfs", "tabulated_lms", "TABULATED_LMS",
           "LMS_TO_XYZ_2DEG", "LMS_TO_XYZ_10DEG", "V_WEIGHTS_2DEG", "V_WEIGHTS_10DEG"]

#: CIE 170-1:2006 / CIE 170-2:2015 matrix from the 2 deg energy-based cone
#: fundamentals (each peaking at 1) to the cone-fundamental-based XYZ CMFs.
LMS_TO_XYZ_2DEG = np.array([[1.94735469, -1.41445123, 0.36476327],
                            [0.68990272, 0.34832189, 0.0],
                            [0.0, 0.0, 1.93485343]])
#: Same for 10 deg (CIE 170-2:2015).
LMS_TO_XYZ_10DEG = np.array([[1.93986443, -1.34664359, 0.43044935],
                             [0.69283932, 0.34967567, 0.0],
                             [0.0, 0.0, 2.14687945]])
#: Weights of L and M in the cone-fundamental-based V(lambda), 2 and 10 deg (CIE 170-1:2006).
V_WEIGHTS_2DEG = LMS_TO_XYZ_2DEG[1, :2]
V_WEIGHTS_10DEG = LMS_TO_XYZ_10DEG[1, :2]

#: Tabulated cone fundamentals offered by colour-science.
TABULATED_LMS = {
    "ss2": "Stockman & Sharpe 2 Degree Cone Fundamentals",
    "ss10": "Stockman & Sharpe 10 Degree Cone Fundamentals",
    "sp1975": "Smith & Pokorny 1975 Normal Trichromats",
}


def _cmfs(name: str, grid: Grid) -> np.ndarray:
    def build():
        import colour

        from ..spectra.grid import resample

        c = colour.MSDS_CMFS[name]
        return {"cmfs": resample(c.wavelengths, c.values, grid, method="cubic", outside="zero")}

    return cached_arrays(f"cmfs-{name}-{grid.key()}", build)["cmfs"]


def cie1931_cmfs(grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """CIE 1931 2 deg colour-matching functions x, y, z; shape (n_wl, 3)."""
    return _cmfs("CIE 1931 2 Degree Standard Observer", grid)


def cie2015_cmfs(grid: Grid = DEFAULT_GRID, field: int = 2) -> np.ndarray:
    """CIE 2015 (cone-fundamental-based) 2 or 10 deg CMFs; shape (n_wl, 3)."""
    return _cmfs(f"CIE 2015 {10 if field == 10 else 2} Degree Standard Observer", grid)


def tabulated_lms(key: str, grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """Tabulated cone fundamentals (``ss2``, ``ss10`` or ``sp1975``), each peaking at 1; (n_wl, 3)."""
    lms = _cmfs(TABULATED_LMS[key], grid)
    return lms / lms.max(axis=0)
