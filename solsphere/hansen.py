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


# ---------------------------------------------------------------------------------------
# Temperature and the Flory–Huggins parameter
# ---------------------------------------------------------------------------------------

#: Molar gas constant R [J/(mol K)] (CODATA 2018 exact value).
GAS_CONSTANT = 8.314462618

#: Offset between °C and K.
KELVIN = 273.15

#: Constant in the Hansen–Beerbower relation for δH [1/K] (Hansen handbook ch. 1; from memory).
DH_TEMPERATURE_CONSTANT = 1.22e-3


def thermal_expansion(density_at_T1, T1: float, density_at_T2, T2: float) -> np.ndarray:
    r"""Volumetric thermal expansion coefficient from two densities.

    .. math:: \alpha = -\frac{1}{\rho}\frac{d\rho}{dT}
              \approx -\frac{\ln(\rho_2/\rho_1)}{T_2 - T_1}

    The logarithmic secant is exact when α is constant over [T1, T2] (then
    ρ(T) = ρ1 exp(-α (T - T1))), which is the assumption :func:`shift_to_temperature`
    makes, and agrees with the plain finite difference -(ρ2 - ρ1)/(ρ̄ (T2 - T1)) to
    second order in ΔT.

    Parameters
    ----------
    density_at_T1, density_at_T2 : float or array-like of shape (n,)
        Liquid densities (any one unit, the same for both; mass or molar density).
    T1, T2 : float
        The two temperatures [°C or K; only the difference is used]; must differ.

    Returns
    -------
    alpha : ndarray of shape (n,)
        Thermal expansion coefficient [1/K].

    Examples
    --------
    >>> round(float(thermal_expansion(0.8623, 25.0, 0.8394, 50.0)[0]), 6)  # invented numbers
    0.001077
    """
    r1 = np.atleast_1d(np.asarray(density_at_T1, dtype=float))
    r2 = np.atleast_1d(np.asarray(density_at_T2, dtype=float))
    if float(T2) == float(T1):
        raise ValueError(f"the two temperatures must differ; found T1 = T2 = {T1!r}")
    if not (np.all(r1 > 0) and np.all(r2 > 0)):
        raise ValueError("densities must be positive")
    return -np.log(r2 / r1) / (float(T2) - float(T1))


def shift_to_temperature(points, alpha, T_from_C: float, T_to_C: float) -> np.ndarray:
    r"""Hansen parameters at another temperature (Hansen–Beerbower relations).

    The relations, with α the liquid's thermal expansion coefficient [1/K]:

    .. math::
        \frac{d\delta_D}{dT} = -1.25\,\alpha\,\delta_D, \qquad
        \frac{d\delta_P}{dT} = -0.5\,\alpha\,\delta_P, \qquad
        \frac{d\delta_H}{dT} = -\delta_H\,(1.22\times10^{-3} + 0.5\,\alpha)

    are linear with constant coefficients when α is constant, so they are integrated
    exactly here:

    .. math::
        \delta_D(T) = \delta_D^0 e^{-1.25\alpha\Delta T}, \quad
        \delta_P(T) = \delta_P^0 e^{-0.5\alpha\Delta T}, \quad
        \delta_H(T) = \delta_H^0 e^{-(1.22\times10^{-3} + 0.5\alpha)\Delta T}

    with ΔT = T_to - T_from [K]. The handbook's linearised form
    δ(T) ≈ δ0 (1 + (dδ/dT / δ) ΔT) agrees to first order in ΔT.

    Limits: α is taken as constant over the interval (use a value that represents the
    interval, e.g. the secant from :func:`thermal_expansion`); the relations are
    empirical and meant for ordinary liquids well below their critical temperature.

    Parameters
    ----------
    points : array-like of shape (n, 3) or (3,)
        Coordinates dD, dP, dH at ``T_from_C`` [MPa½].
    alpha : float or array-like of shape (n,)
        Thermal expansion coefficient of each liquid [1/K].
    T_from_C, T_to_C : float
        Temperature of the given coordinates and the target temperature [°C].

    Returns
    -------
    points : ndarray of shape (n, 3)
        Coordinates at ``T_to_C`` [MPa½].

    References
    ----------
    .. [1] C. M. Hansen, *Hansen Solubility Parameters: A User's Handbook*, 2nd ed.,
       CRC Press, Boca Raton, 2007, ch. 1 (temperature dependence of δD, δP, δH; the
       constants 1.25, 0.5 and 1.22×10⁻³ K⁻¹ are quoted from memory).
    .. [2] The relations are credited in the handbook to A. Beerbower (bibliographic
       details from memory; see the handbook's reference list).

    Examples
    --------
    >>> shift_to_temperature([18.0, 1.4, 2.0], 1.07e-3, 25.0, 60.0).round(3).tolist()
    [[17.177, 1.374, 1.881]]
    """
    p = as_points(points)
    a = np.asarray(alpha, dtype=float)
    if a.ndim == 0:
        a = np.full(p.shape[0], float(a))
    a = a.reshape(-1)
    if a.shape[0] != p.shape[0]:
        raise ValueError(f"alpha must be one number or one per point; found {a.shape[0]} "
                         f"values for {p.shape[0]} points")
    if not np.all(np.isfinite(a)):
        raise ValueError("alpha must be finite for every point (None/NaN found); "
                         "give the liquid's thermal expansion coefficient in 1/K")
    dT = float(T_to_C) - float(T_from_C)
    rates = np.column_stack([1.25 * a, 0.5 * a, DH_TEMPERATURE_CONSTANT + 0.5 * a])
    return p * np.exp(-rates * dT)


def flory_huggins_chi(Ra, molar_volume, T_C: float = 25.0) -> np.ndarray:
    r"""Flory–Huggins interaction parameter estimated from the Hansen distance.

    .. math:: \chi_{12} \approx \frac{V_1}{R T}\left[(\delta_{D1}-\delta_{D2})^2
              + \tfrac14(\delta_{P1}-\delta_{P2})^2 + \tfrac14(\delta_{H1}-\delta_{H2})^2\right]
              = \frac{V_1\,R_a^2}{4\,R\,T}

    with V1 the molar volume of the solvent (the smaller molecule). Units: V1 in
    cm³/mol and Ra in MPa½ give V1 Ra² in MPa·cm³/mol = J/mol, so with
    R = 8.314462618 J/(mol K) and T in kelvin χ is dimensionless. No separate entropic
    constant is added.

    Parameters
    ----------
    Ra : float or array-like of shape (n,)
        Hansen distance between solvent and material [MPa½].
    molar_volume : float or array-like of shape (n,)
        Molar volume of the solvent [cm³/mol].
    T_C : float, default=25.0
        Temperature [°C].

    Returns
    -------
    chi : ndarray of shape (n,)
        Estimated χ [dimensionless].

    References
    ----------
    .. [1] C. M. Hansen, *Hansen Solubility Parameters: A User's Handbook*, 2nd ed.,
       CRC Press, Boca Raton, 2007, ch. 1 (χ from the Hansen parameters; form and the
       factor 1/4 quoted from memory).

    Examples
    --------
    >>> round(float(flory_huggins_chi(8.0, 100.0, 25.0)[0]), 4)  # 100*64/4 / (R*298.15)
    0.6454
    """
    r = np.atleast_1d(np.asarray(Ra, dtype=float))
    v = np.atleast_1d(np.asarray(molar_volume, dtype=float))
    T = float(T_C) + KELVIN
    if not T > 0:
        raise ValueError(f"temperature must be above absolute zero; found {T_C!r} °C")
    if np.any(v <= 0):
        raise ValueError("molar volumes must be positive (cm³/mol)")
    return v * r * r / (4.0 * GAS_CONSTANT * T)
