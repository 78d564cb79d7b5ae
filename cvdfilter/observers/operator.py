"""One operator for "k matrices plus a separator": linear, or linear on each side of a plane.

Every simulation the tool computes is of this form: one 3x3 matrix (normal observers, Vienot 1999,
Machado 2009) or two matrices chosen per colour by the side of a plane through the origin (Brettel et
al. 1997). The cone-space simulation (:mod:`cvdfilter.observers.simulate`), its display-space form
(:mod:`cvdfilter.observers.display`) and the renderer's folded pixel pipeline (:mod:`cvdfilter.rendering`)
are all this one type, composed with plain matrices.

Convention (one for the whole package): **column vectors**. ``apply(x) = matrices[0] @ x`` where
``x . separator >= 0`` and ``matrices[1] @ x`` elsewhere; for arrays of colours shaped (..., 3) that is
``x @ matrices[i].T``. Code that works on row vectors (the renderer's tiles of pixels) takes
:attr:`PiecewiseLinear.row_matrices`, the transposes.

Public: :class:`PiecewiseLinear`, :class:`HasOperator`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["PiecewiseLinear", "HasOperator"]


def _as_matrix(m) -> np.ndarray:
    if isinstance(m, PiecewiseLinear):
        if len(m.matrices) != 1:
            raise ValueError("composing two piecewise operators is not piecewise linear on one plane")
        return m.matrices[0]
    a = np.asarray(m, dtype=float)
    if a.shape != (3, 3):
        raise ValueError(f"expected a (3, 3) matrix, got {a.shape}")
    return a


@dataclass(frozen=True, eq=False)
class PiecewiseLinear:
    """A linear map of colour vectors, or two linear maps split by a plane through the origin.

    Attributes
    ----------
    matrices : numpy.ndarray
        (k, 3, 3), k = 1 or 2, float64; act on column vectors (``y = M @ x``).
    separator : numpy.ndarray or None
        (3,), the plane's normal, for k = 2: ``matrices[0]`` applies where ``x . separator >= 0``,
        ``matrices[1]`` elsewhere. None for k = 1.

    Examples
    --------
    >>> op = PiecewiseLinear(np.stack([np.eye(3), np.diag([1.0, 0.0, 1.0])]), np.array([0.0, 1.0, 0.0]))
    >>> op.apply([[1.0, 2.0, 3.0], [1.0, -2.0, 3.0]]).tolist()
    [[1.0, 2.0, 3.0], [1.0, 0.0, 3.0]]
    >>> op.then(2 * np.eye(3)).apply([1.0, -2.0, 3.0]).tolist()
    [2.0, 0.0, 6.0]
    """

    matrices: np.ndarray
    separator: np.ndarray | None = None

    def __post_init__(self) -> None:
        mats = np.asarray(self.matrices, dtype=float)
        if mats.ndim == 2:
            mats = mats[None]
        if mats.shape not in ((1, 3, 3), (2, 3, 3)):
            raise ValueError(f"expected (k, 3, 3) matrices with k = 1 or 2, got {mats.shape}")
        sep = None if self.separator is None else np.asarray(self.separator, dtype=float)
        if (len(mats) == 2) != (sep is not None) or (sep is not None and sep.shape != (3,)):
            raise ValueError("two matrices need a (3,) separator, one matrix none")
        object.__setattr__(self, "matrices", mats)
        object.__setattr__(self, "separator", sep)

    @classmethod
    def linear(cls, matrix) -> PiecewiseLinear:
        """The operator of one (3, 3) matrix (column vectors)."""
        return cls(np.asarray(matrix, dtype=float)[None])

    @property
    def is_linear(self) -> bool:
        """True for one matrix."""
        return len(self.matrices) == 1

    @property
    def row_matrices(self) -> np.ndarray:
        """(k, 3, 3) transposes of :attr:`matrices`, for row vectors: ``y = x @ row_matrices[i]``."""
        return np.transpose(self.matrices, (0, 2, 1))

    def apply(self, x) -> np.ndarray:
        """Apply to colour vectors shaped (..., 3); returns (..., 3) float64 (not clipped).

        With two matrices only the rows that differ between them are recomputed on the negative side
        (for Brettel 1997: the missing cone's row).
        """
        x = np.asarray(x, dtype=float)
        if x.shape[-1:] != (3,):
            raise ValueError(f"expected colour vectors shaped (..., 3), got {x.shape}")
        if len(self.matrices) == 1:
            return x @ self.matrices[0].T
        m0, m1 = self.matrices
        out = x @ m0.T
        differ = np.nonzero(np.any(m0 != m1, axis=1))[0]
        if len(differ):
            side = x @ self.separator >= 0
            out[..., differ] = np.where(side[..., None], out[..., differ], x @ m1[differ].T)
        return out

    __call__ = apply

    def compose(self, inner) -> PiecewiseLinear:
        """``self`` after ``inner``: ``x -> self(inner @ x)``.

        ``inner`` is a (3, 3) matrix or a linear operator; the plane is carried back through it
        (``separator -> inner^T separator``).
        """
        a = _as_matrix(inner)
        # Computed as row vectors (a^T M^T), the product the renderer has always folded.
        rows = a.T @ self.row_matrices
        sep = None if self.separator is None else a.T @ self.separator
        return PiecewiseLinear(np.transpose(rows, (0, 2, 1)), sep)

    def then(self, outer) -> PiecewiseLinear:
        """``outer`` after ``self``: ``x -> outer @ self(x)``; the plane is unchanged.

        ``outer`` is a (3, 3) matrix or a linear operator.
        """
        b = _as_matrix(outer)
        rows = self.row_matrices @ b.T
        return PiecewiseLinear(np.transpose(rows, (0, 2, 1)), self.separator)


class HasOperator:
    """Mixin for results that carry an ``operator`` (:class:`PiecewiseLinear`): its matrices and separator
    as attributes, and ``apply``/``__call__`` (used by the simulation and its display form)."""

    operator: PiecewiseLinear

    @property
    def matrices(self) -> np.ndarray:
        """(k, 3, 3), k = 1 or 2, float64; act on column vectors (``out = M @ x``)."""
        return self.operator.matrices

    @property
    def separator(self) -> np.ndarray | None:
        """(3,) with two matrices: ``matrices[0]`` applies where ``x @ separator >= 0``; else None."""
        return self.operator.separator

    def apply(self, x) -> np.ndarray:
        """Apply the operator to colour vectors shaped (..., 3); returns (..., 3) (not clipped)."""
        return self.operator.apply(x)

    def __call__(self, x) -> np.ndarray:
        return self.operator.apply(x)
