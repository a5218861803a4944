"""The arithmetic of Hansen space.

Small pure functions over numpy arrays. A point array has shape ``(n, 3)`` with columns
``dD, dP, dH`` in MPa½.

References
----------
.. [1] C. M. Hansen, *Hansen Solubility Parameters: A User's Handbook*, 2nd ed.,
   CRC Press, Boca Raton, 2007, ch. 1 (distance Ra with the factor 4 on dD, RED,
   volume-fraction mixing of a blend's parameters).
"""

from __future__ import annotations

import numpy as np

#: Weights that make Hansen distance Euclidean: Ra = |W (x - c)| with W = diag(2, 1, 1).
SCALE = np.array([2.0, 1.0, 1.0])


def as_points(points) -> np.ndarray:
    """Return ``points`` as a float array of shape (n, 3) (a single point gives n = 1)."""
    p = np.asarray(points, dtype=float)
    if p.ndim == 1:
        p = p.reshape(1, -1)
    if p.shape[-1] != 3:
        raise ValueError(f"points must have 3 columns (dD, dP, dH); found shape {p.shape}")
    return p


def scaled(points) -> np.ndarray:
    """Map points to the space where Hansen distance is Euclidean (dD doubled).

    >>> scaled([[16.0, 5.0, 7.0]]).tolist()
    [[32.0, 5.0, 7.0]]
    """
    return np.asarray(points, dtype=float) * SCALE


def ra(points, centre) -> np.ndarray:
    r"""Hansen distance between points and a centre.

    .. math:: R_a^2 = 4(\delta_{D1}-\delta_{D2})^2 + (\delta_{P1}-\delta_{P2})^2 + (\delta_{H1}-\delta_{H2})^2

    Parameters
    ----------
    points : array-like of shape (n, 3) or (3,)
        Solvent coordinates [MPa½].
    centre : array-like of shape (3,) or broadcastable to ``points``
        Sphere centre [MPa½].

    Returns
    -------
    ra : ndarray of shape (n,)
        Hansen distance [MPa½].

    Examples
    --------
    >>> float(ra([18.0, 1.4, 2.0], [17.0, 3.4, 4.0])[0])  # 4*1 + 4 + 4 = 12
    3.4641016151377544
    """
    d = (as_points(points) - np.asarray(centre, dtype=float)) * SCALE
    return np.sqrt(np.einsum("...k,...k->...", d, d))


def red(points, centre, R0: float) -> np.ndarray:
    """Relative energy difference RED = Ra / R0 (< 1 inside the sphere).

    >>> float(red([18.0, 1.4, 2.0], [17.0, 3.4, 4.0], 4.0)[0])
    0.8660254037844386
    """
    if not R0 > 0:
        raise ValueError(f"R0 must be positive; found {R0!r}")
    return ra(points, centre) / float(R0)


def mix(points, fractions) -> np.ndarray:
    """Coordinates of a blend: the volume-fraction weighted mean of its components.

    Parameters
    ----------
    points : array-like of shape (k, 3)
        Components' coordinates.
    fractions : array-like of shape (k,)
        Volume parts; normalised to sum to 1 (must sum to a positive number).

    >>> mix([[18.0, 1.4, 2.0], [15.8, 8.8, 19.4]], [70, 30]).round(2).tolist()
    [17.34, 3.62, 7.22]
    """
    p = as_points(points)
    f = np.asarray(fractions, dtype=float)
    total = f.sum()
    if not total > 0:
        raise ValueError("blend parts must sum to a positive number")
    return (f / total) @ p


def delta_total(points) -> np.ndarray:
    """Total (Hildebrand-like) parameter δt = sqrt(δD² + δP² + δH²) [MPa½]."""
    p = as_points(points)
    return np.sqrt((p * p).sum(axis=1))
