r"""Activity coefficients of solvent blends, for many compositions at once.

Three models, chosen per blend (the first one that applies to every component):

1. **Dortmund (modified) UNIFAC** [1]_ with the group assignments of
   ``data/mixture_data.csv`` (the DDBST tables carried by ``thermo``, or derived from the
   structure) and the 2016 interaction parameters, subgroup R and Q carried by ``thermo``;
2. **UNIFAC** (original) [2]_, same sources, when a Dortmund group or parameter is missing;
3. **regular-solution estimate from Hansen parameters** (our fallback, labelled as such):
   Flory–Huggins combinatorial term plus the Scatchard–Hildebrand term with Hansen's
   interaction energy density :math:`A_{ij} = R_{a,ij}^2/4` [MPa]:

   .. math:: \ln\gamma_i = \ln\frac{\phi_i}{x_i} + 1 - \frac{\phi_i}{x_i}
             + \frac{V_i}{RT}\Big(\sum_j \phi_j A_{ij}
             - \tfrac12\sum_{j,k}\phi_j\phi_k A_{jk}\Big)

   It has no hydrogen-bond association and sees only the distance: a rough guide.

The UNIFAC equations are evaluated in numpy over a batch of blends (rows), each with its
own components and temperature; they reproduce ``thermo.unifac.UNIFAC`` to rounding
(``tests/test_activity.py``). ``thermo`` is imported only to read its parameter tables.

References
----------
.. [1] J. Gmehling, J. Li, M. Schiller, "A modified UNIFAC model. 2. Present parameter
   matrix and results for different thermodynamic properties", *Ind. Eng. Chem. Res.* 32
   (1993) 178–193 (details from memory).
.. [2] A. Fredenslund, R. L. Jones, J. M. Prausnitz, "Group-contribution estimation of
   activity coefficients in nonideal liquid mixtures", *AIChE J.* 21 (1975) 1086–1099
   (details from memory).
"""

from __future__ import annotations

from functools import lru_cache
from typing import Sequence

import numpy as np

from solsphere.mixtures.data import load_mixture_data

__all__ = ["ActivityModel", "activity_coefficients", "METHODS", "DORTMUND", "UNIFAC",
           "REGULAR", "IDEAL"]

R_GAS = 8.314462618  # J/(mol K)
DORTMUND, UNIFAC, REGULAR, IDEAL = 0, 1, 2, 3
#: Labels of the method codes returned by :meth:`ActivityModel.ln_gamma`.
METHODS = ("Dortmund UNIFAC", "UNIFAC",
           "regular-solution estimate from Hansen parameters (fallback, rough)",
           "ideal solution (no data for an activity model)")


@lru_cache(maxsize=2)
def _tables(version: int):
    """(subgroups, interaction parameters) of thermo for Dortmund (0) or UNIFAC (1)."""
    import thermo.unifac as U  # deferred: thermo takes about 0.3 s to import
    U.load_unifac_ip()
    if version == DORTMUND:
        return U.DOUFSG, U.DOUFIP2016
    return U.UFSG, U.UFIP


class _GroupSet:
    """One UNIFAC variant's arrays for a list of components."""

    def __init__(self, groups: list, version: int):
        subgroups, ip = _tables(version)
        self.version = version
        k = len(groups)
        usable = [g is not None and all(s in subgroups for s in g) for g in groups]
        sgs = sorted({s for g, ok in zip(groups, usable) if ok for s in g})
        self.sgs = sgs
        col = {s: j for j, s in enumerate(sgs)}
        S = max(len(sgs), 1)
        self.nu = np.zeros((k, S))
        for i, (g, ok) in enumerate(zip(groups, usable)):
            if ok:
                for s, n in g.items():
                    self.nu[i, col[s]] = n
        self.R = np.array([subgroups[s].R for s in sgs] or [0.0])
        self.Q = np.array([subgroups[s].Q for s in sgs] or [0.0])
        main = [subgroups[s].main_group_id for s in sgs]
        self.a = np.zeros((S, S))
        self.b = np.zeros((S, S))
        self.c = np.zeros((S, S))
        known = np.ones((S, S), dtype=bool)
        for p, mp in enumerate(main):
            for q, mq in enumerate(main):
                if mp == mq:
                    continue
                v = ip.get(mp, {}).get(mq)
                if v is None:
                    known[p, q] = False
                    continue
                if version == DORTMUND:
                    self.a[p, q], self.b[p, q], self.c[p, q] = v
                else:
                    self.a[p, q] = v
        has = (self.nu > 0).astype(float)  # (k, S)
        miss = (~known).astype(float)
        # components i and j can be mixed when every pair of their groups has parameters
        own = np.einsum("ip,pq,iq->i", has, miss, has) > 0
        cross = (has @ miss @ has.T > 0) | (has @ miss.T @ has.T > 0)
        self.usable = np.array(usable)
        self.pair_ok = (~cross & ~own[:, None] & ~own[None, :]
                        & self.usable[:, None] & self.usable[None, :])
        self._cache: dict = {}

    def rows_ok(self, idx: np.ndarray, present: np.ndarray) -> np.ndarray:
        """Rows whose present components all pair up with known parameters."""
        ok = self.pair_ok[idx[:, :, None], idx[:, None, :]]  # (n, K, K)
        both = present[:, :, None] & present[:, None, :]
        return np.all(ok | ~both, axis=(1, 2))

    def ln_gamma(self, idx: np.ndarray, x: np.ndarray, T: np.ndarray) -> np.ndarray:
        nu = self.nu[idx]  # (n, K, S)
        R, Q = self.R, self.Q
        r = nu @ R
        q = nu @ Q
        # combinatorial part
        xr = np.einsum("nk,nk->n", x, r)[:, None]
        xq = np.einsum("nk,nk->n", x, q)[:, None]
        rs = np.where(r > 0, r, 1.0)
        V = rs / xr
        F = np.where(q > 0, q, 1.0) / xq
        if self.version == DORTMUND:
            r34 = rs ** 0.75
            Vp = r34 / np.einsum("nk,nk->n", x, r34)[:, None]
        else:
            Vp = V
        ln_c = 1.0 - Vp + np.log(Vp) - 5.0 * q * (1.0 - V / F + np.log(V / F))
        # residual part
        if np.all(T == T[0]):  # one temperature: psi and the pure parts once (cached)
            psi, pure = self._at(float(T[0]))
            lnG = self._ln_Gamma(np.einsum("nk,nks->ns", x, nu), psi)  # (n, S)
            lnGp = pure[idx]  # (n, K, S)
        else:
            Tn = T[:, None, None]
            psi = np.exp(-(self.a[None] + self.b[None] * Tn + self.c[None] * Tn ** 2) / Tn)
            lnG = self._ln_Gamma(np.einsum("nk,nks->ns", x, nu), psi)
            lnGp = self._ln_Gamma(nu, psi)
        ln_r = np.einsum("nks,nks->nk", nu, lnG[:, None, :] - lnGp)
        out = ln_c + ln_r
        return np.where(r > 0, out, 0.0)

    def _at(self, T: float):
        """(psi, pure-component ln Γ of every component) at one temperature, cached."""
        key = round(T, 9)
        hit = self._cache.get(key)
        if hit is None:
            psi = np.exp(-(self.a + self.b * T + self.c * T ** 2) / T)
            pure = self._ln_Gamma(self.nu, psi)
            if len(self._cache) > 64:
                self._cache.clear()
            hit = self._cache[key] = (psi, pure)
        return hit

    def _ln_Gamma(self, counts, psi):
        """Group activity coefficients ln Γ_k for group counts (..., S); psi (S, S) or
        (n, S, S) with counts (n, S) or (n, K, S)."""
        Q = self.Q
        with np.errstate(divide="ignore", invalid="ignore"):  # components without groups
            out = self._ln_Gamma_raw(counts, psi, Q)
        return np.nan_to_num(out, nan=0.0, posinf=0.0, neginf=0.0)

    @staticmethod
    def _ln_Gamma_raw(counts, psi, Q):
        th = counts * Q
        th = th / np.maximum(th.sum(axis=-1, keepdims=True), 1e-300)
        if psi.ndim == 2:
            s1 = th @ psi
            s2 = (th / s1) @ psi.T
        elif th.ndim == 2:
            s1 = np.einsum("nm,nmk->nk", th, psi)
            s2 = np.einsum("nm,nkm->nk", th / s1, psi)
        else:
            s1 = np.einsum("njm,nmk->njk", th, psi)
            s2 = np.einsum("njm,nkm->njk", th / s1, psi)
        return Q * (1.0 - np.log(s1) - s2)


class ActivityModel:
    """Activity coefficients for blends drawn from a list of components.

    Parameters
    ----------
    solvents : sequence of Solvent
        The components (a pool); each blend names its components by index into it.
        Group assignments are looked up by CAS number in the packaged mixture data.

    Examples
    --------
    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> m = ActivityModel([lib.lookup("ethanol"), lib.lookup("water")])
    >>> g, method = m.gamma([[0, 1]], [[0.1, 0.9]], 25.0)
    >>> METHODS[method[0]], round(float(g[0, 0]), 2)
    ('Dortmund UNIFAC', 3.04)
    """

    def __init__(self, solvents: Sequence):
        self.solvents = list(solvents)
        data = load_mixture_data()
        recs = [data.get(s.cas) if getattr(s, "cas", None) else None for s in self.solvents]
        self.records = recs
        self.sets = (_GroupSet([r.dortmund if r else None for r in recs], DORTMUND),
                     _GroupSet([r.unifac if r else None for r in recs], UNIFAC))
        self.points = np.array([s.point for s in self.solvents], dtype=float).reshape(-1, 3)
        vm = [s.molar_volume for s in self.solvents]
        self.has_volume = np.array([v is not None and v > 0 for v in vm], dtype=bool)
        self.molar_volumes = np.array([v if v else np.nan for v in vm], dtype=float)

    def methods(self, idx, x) -> np.ndarray:
        """Method code per row (see :data:`METHODS`)."""
        idx = np.asarray(idx, dtype=int)
        present = np.asarray(x, dtype=float) > 0
        out = np.full(idx.shape[0], IDEAL, dtype=int)
        reg = np.all(self.has_volume[idx] | ~present, axis=1)
        out[reg] = REGULAR
        for code in (UNIFAC, DORTMUND):  # the better one last, so it wins
            ok = self.sets[code].rows_ok(idx, present)
            out[ok] = code
        return out

    def ln_gamma(self, idx, x, T_C, *, method=None) -> tuple[np.ndarray, np.ndarray]:
        """ln γ for each row of a batch of blends.

        Parameters
        ----------
        idx : array-like of int, shape (n, K)
            Component indices (into ``solvents``) of each blend.
        x : array-like of shape (n, K)
            Liquid mole fractions (rows normalised here; zeros allowed).
        T_C : float or array-like of shape (n,)
            Temperature [°C].
        method : ndarray of int, shape (n,), optional
            The codes of :meth:`methods` for these rows, when the caller already has
            them (the same components present): saves recomputing them.

        Returns
        -------
        ln_gamma : ndarray of shape (n, K)
        method : ndarray of int, shape (n,)
            Index into :data:`METHODS`.
        """
        idx = np.atleast_2d(np.asarray(idx, dtype=int))
        x = np.atleast_2d(np.asarray(x, dtype=float))
        if x.shape != idx.shape:
            raise ValueError(f"x has shape {x.shape}; expected {idx.shape} like idx")
        x = x / x.sum(axis=1, keepdims=True)
        T = np.broadcast_to(np.asarray(T_C, dtype=float) + 273.15, (idx.shape[0],)).copy()
        method = self.methods(idx, x) if method is None else np.asarray(method)
        out = np.zeros_like(x)
        for code in (DORTMUND, UNIFAC):
            rows = method == code
            if rows.any():
                out[rows] = self.sets[code].ln_gamma(idx[rows], x[rows], T[rows])
        rows = method == REGULAR
        if rows.any():
            out[rows] = self._regular(idx[rows], x[rows], T[rows])
        return out, method

    def gamma(self, idx, x, T_C) -> tuple[np.ndarray, np.ndarray]:
        """Activity coefficients γ (not their logarithms) and the method codes."""
        lg, m = self.ln_gamma(idx, x, T_C)
        return np.exp(lg), m

    def _regular(self, idx, x, T):
        V = np.where(self.has_volume[idx], self.molar_volumes[idx], 100.0)
        pts = self.points[idx]  # (n, K, 3)
        d = pts[:, :, None, :] - pts[:, None, :, :]
        A = (d[..., 0] ** 2 + 0.25 * d[..., 1] ** 2 + 0.25 * d[..., 2] ** 2)  # Ra²/4 [MPa]
        phi = x * V
        phi = phi / phi.sum(axis=1, keepdims=True)
        mean = np.einsum("nj,nk,njk->n", phi, phi, A)[:, None]
        energy = np.einsum("nij,nj->ni", A, phi) - 0.5 * mean
        ratio = np.where(x > 0, phi / np.where(x > 0, x, 1.0),
                         V / np.einsum("nk,nk->n", x, V)[:, None])
        comb = np.log(ratio) + 1.0 - ratio
        return comb + V * energy / (R_GAS * T[:, None])

    def describe(self, code: int) -> str:
        """The label of a method code."""
        return METHODS[int(code)]


def activity_coefficients(solvents: Sequence, mole_fractions, T_C: float = 25.0):
    """γ of one set of components at one or many compositions.

    Parameters
    ----------
    solvents : sequence of Solvent, length k
    mole_fractions : array-like of shape (k,) or (n, k)
    T_C : float, default=25.0
        Temperature [°C].

    Returns
    -------
    gamma : ndarray of shape (k,) or (n, k)
    method : str
        The model used (one of :data:`METHODS`; the same for every row).

    Examples
    --------
    >>> from solsphere.library.table import load_library
    >>> lib = load_library()
    >>> g, how = activity_coefficients([lib.lookup("toluene"), lib.lookup("ethanol")], [0.5, 0.5])
    >>> how, bool(g[0] > 1.4 and g[1] > 1.4)
    ('Dortmund UNIFAC', True)
    """
    x = np.asarray(mole_fractions, dtype=float)
    single = x.ndim == 1
    x2 = np.atleast_2d(x)
    model = ActivityModel(solvents)
    idx = np.broadcast_to(np.arange(len(solvents)), x2.shape)
    g, m = model.gamma(idx, x2, T_C)
    method = METHODS[int(m.max())]  # the weakest model any row needed
    return (g[0] if single else g), method
