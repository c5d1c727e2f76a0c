"""Named uncertain inputs, their grouping into data, and their joint (correlated) distribution.

A *variable* is one scalar input column of the model (e.g. ``"CH4.g.heat_capacity[A]"``);
a *datum* is one sourced property and may hold several variables (all coefficients of one
Cp curve). Contributions and sensitivity indices are reported by datum.

The joint distribution is built from the marginals and a correlation matrix R through a
Gaussian copula (e.g. Nelsen, *An Introduction to Copulas*, 2nd ed., §2.3 and §5.1;
JCGM 101 §6.4.8 for the all-normal case, where it is exactly the multivariate normal
N(x̂, diag(u) R diag(u))).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import special

from ..errors import CorrelationError, StatisticsError
from .correlation import PSD_TOL, check_correlation, normal_score_from_pearson
from .distributions import Distribution
from .scratch import scratch

__all__ = ["InputVariable", "InputSet", "Datum", "rows_times", "cols_times"]

#: uniforms are clipped to [U_CLIP, 1 - U_CLIP] before Φ⁻¹ (2⁻⁵³: the resolution of doubles near 1)
U_CLIP = 2.0**-53


def rows_times(Z: np.ndarray, B: np.ndarray) -> np.ndarray:
    """Z @ B with each row's result independent of how many rows Z has: BLAS multiplies a
    single row by another routine (matrix-vector) that rounds differently, so one row is
    computed as two."""
    if Z.shape[0] == 1:
        return (np.vstack([Z, Z]) @ B)[:1]
    return Z @ B


def cols_times(Z: np.ndarray, B: np.ndarray) -> np.ndarray:
    """(Z @ B)ᵀ as a C-contiguous (M, n) array, computed as Bᵀ Zᵀ: one contiguous row per column
    of the product (a column of a column-major result), with :func:`rows_times`' guard for a
    single row."""
    if Z.shape[0] == 1:
        return (B.T @ np.vstack([Z, Z]).T)[:, :1].copy()
    return B.T @ Z.T


@dataclass(frozen=True)
class InputVariable:
    """One scalar model input.

    Attributes
    ----------
    name : str
        Column name, unique within an :class:`InputSet` (e.g. ``"CH4.g.heat_capacity[A]"``).
    datum : str
        Id of the datum (group) the variable belongs to (e.g. ``"CH4.g.heat_capacity"``).
    distribution : Distribution
        The assigned probability distribution.
    """

    name: str
    datum: str
    distribution: Distribution

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name:
            raise StatisticsError(f"input variable name must be a non-empty string, got {self.name!r}")
        if not isinstance(self.datum, str) or not self.datum:
            raise StatisticsError(f"datum id of {self.name!r} must be a non-empty string", key=self.name)
        if not isinstance(self.distribution, Distribution):
            raise StatisticsError(f"{self.name}: distribution must be a Distribution, got "
                                  f"{type(self.distribution).__name__}", key=self.datum)


@dataclass
class Datum:
    """One datum for :meth:`InputSet.from_data`.

    Attributes
    ----------
    id : str
        Datum id (key path, e.g. ``"CH4.g.heat_capacity"``).
    variables : list of InputVariable or (name, Distribution) pairs
        Its variables; for ``InputVariable`` the ``datum`` field must equal ``id``.
    correlation : array (n, n), optional
        Correlation matrix of the datum's variables.
    covariance : array (n, n), optional
        Covariance matrix instead (its diagonal must equal the variables' u²; rows of exact
        variables must be zero). Give at most one of the two.
    """

    id: str
    variables: list = field(default_factory=list)
    correlation: Any = None
    covariance: Any = None



class InputSet:
    """Named inputs with marginal distributions and a full correlation matrix.

    Parameters
    ----------
    variables : sequence of InputVariable
        The model inputs, in the column order of the model's X[N, D].
    correlation : array (D, D), optional
        Correlation matrix (default: identity). Validated with :func:`~uqthermo.uq.correlation.check_correlation`.

    Attributes
    ----------
    variables : list[InputVariable]
    correlation : ndarray (D, D)
    names : list[str]            variable names (column order)
    data : list[str]             datum ids, unique, in order of first appearance
    groups : dict[str, list[int]] datum id → column indices
    estimates, stds, dofs : ndarray (D,)
    """

    def __init__(self, variables: Sequence[InputVariable], correlation: Any = None, *, scale: str = "pearson"):
        if scale not in ("pearson", "normal-scores"):
            raise StatisticsError(f"correlation scale must be 'pearson' or 'normal-scores', got {scale!r}")
        #: "pearson": ``correlation`` is the Pearson correlation of the inputs themselves (the GUM's
        #: r(x_i, x_j), used by the linear method); the copula's normal-score correlation is derived
        #: from it pair by pair (NORTA). "normal-scores": ``correlation`` applies to the copula's
        #: normal scores directly (so rank correlations are ρ_S = (6/π) asin(r/2)).
        self.correlation_scale = scale
        variables = list(variables)
        for v in variables:
            if not isinstance(v, InputVariable):
                raise StatisticsError(f"expected InputVariable, got {type(v).__name__}")
        names = [v.name for v in variables]
        seen: set[str] = set()
        for n in names:
            if n in seen:
                raise StatisticsError(f"duplicate input variable name {n!r}", key=n)
            seen.add(n)
        d = len(variables)
        self.variables: list[InputVariable] = variables
        self.names: list[str] = names
        if correlation is None:
            R = np.eye(d)
        else:
            try:
                R = check_correlation(correlation, names)
            except CorrelationError as err:
                # also name the data involved, so the case layer can point at its keys
                involved = getattr(err, "variables", [])
                by_name = {v.name: v.datum for v in variables}
                err.data = list(dict.fromkeys(by_name[n] for n in involved if n in by_name))  # type: ignore[attr-defined]
                if err.data and err.key in by_name:
                    err.key = by_name[err.key]
                raise
        self.correlation: np.ndarray = R
        self.correlation.setflags(write=False)
        self.groups: dict[str, list[int]] = {}
        for i, v in enumerate(variables):
            self.groups.setdefault(v.datum, []).append(i)
        self.data: list[str] = list(self.groups)
        self.estimates = np.array([v.distribution.estimate for v in variables], dtype=float)
        self.stds = np.array([v.distribution.std for v in variables], dtype=float)
        self.dofs = np.array([v.distribution.dof for v in variables], dtype=float)
        for a in (self.estimates, self.stds, self.dofs):
            a.setflags(write=False)
        self._factor = None  # copula factor (computed now when correlations are given, so errors surface early)
        self._plan = None    # column plan of from_uniform (cached on first use)
        if correlation is not None:
            self._copula_factor()

    # -- builders -------------------------------------------------------------------------
    @classmethod
    def from_data(cls, data: Sequence[Datum | Mapping[str, Any]],
                  pairwise: Mapping[tuple[str, str], float] | Iterable[tuple[str, str, float]] | None = None
                  ) -> InputSet:
        """Assemble an input set from data with within-datum and datum-to-datum correlations.

        Parameters
        ----------
        data : sequence of :class:`Datum` (or mappings with keys ``id``, ``variables``,
            optional ``correlation`` / ``covariance``)
        pairwise : mapping ``(a, b) -> r`` or iterable of ``(a, b, r)``
            Correlation coefficients between data. ``a`` and ``b`` may be datum ids or
            variable names. **Rule for multi-variable data:** a datum-to-datum coefficient
            is accepted only between single-variable data (it is then the correlation of
            the two variables). For a datum with several variables there is no unique
            meaning, so it is rejected with a :class:`CorrelationError` asking for
            variable-level coefficients (e.g. between ``"A.g.heat_capacity[a]"`` and
            ``"B.g.heat_capacity[a]"``). Repeated pairs with different values and
            self-correlations are rejected too.

        The assembled matrix is validated as a whole (PSD check names the entries).
        """
        variables: list[InputVariable] = []
        blocks: list[tuple[list[int], np.ndarray]] = []
        datum_cols: dict[str, list[int]] = {}
        for item in data:
            if isinstance(item, Mapping):
                try:
                    item = Datum(item["id"], list(item.get("variables", [])),
                                 item.get("correlation"), item.get("covariance"))
                except KeyError:
                    raise StatisticsError("each datum needs an 'id'") from None
            if not isinstance(item, Datum):
                raise StatisticsError(f"expected Datum, got {type(item).__name__}")
            if item.id in datum_cols:
                raise StatisticsError(f"duplicate datum id {item.id!r}", key=item.id)
            if not item.variables:
                raise StatisticsError(f"datum {item.id!r} has no variables", key=item.id)
            cols = []
            for v in item.variables:
                if isinstance(v, InputVariable):
                    if v.datum != item.id:
                        raise StatisticsError(f"variable {v.name!r} belongs to datum {v.datum!r}, "
                                              f"not {item.id!r}", key=item.id)
                else:
                    try:
                        name, dist = v
                    except (TypeError, ValueError):
                        raise StatisticsError(f"datum {item.id!r}: variables must be InputVariable or "
                                              "(name, Distribution) pairs", key=item.id) from None
                    v = InputVariable(name, item.id, dist)
                cols.append(len(variables))
                variables.append(v)
            datum_cols[item.id] = cols
            vnames = [variables[c].name for c in cols]
            if item.correlation is not None and item.covariance is not None:
                raise CorrelationError(f"datum {item.id!r}: give a correlation or a covariance matrix, not both",
                                       key=item.id)
            try:
                if item.covariance is not None:
                    R = _covariance_to_correlation(item.covariance, [variables[c] for c in cols], item.id)
                    blocks.append((cols, R))
                elif item.correlation is not None:
                    R = check_correlation(item.correlation, vnames, f"correlation matrix of {item.id}")
                    blocks.append((cols, R))
            except CorrelationError as err:
                err.key = item.id
                err.data = [item.id]  # type: ignore[attr-defined]
                raise
        names = [v.name for v in variables]
        index = {n: i for i, n in enumerate(names)}
        if len(index) != len(names):
            dup = next(n for n in names if names.count(n) > 1)
            raise StatisticsError(f"duplicate input variable name {dup!r}", key=dup)
        d = len(variables)
        R = np.eye(d)
        for cols, block in blocks:
            R[np.ix_(cols, cols)] = block
        if pairwise is not None:
            items = pairwise.items() if isinstance(pairwise, Mapping) else pairwise
            given: dict[tuple[int, int], float] = {}
            for entry in items:
                try:
                    if isinstance(pairwise, Mapping):
                        (a, b), r = entry
                    else:
                        a, b, r = entry
                except (TypeError, ValueError):
                    raise CorrelationError("pairwise correlations must be (a, b, r) entries") from None
                i, j = (_resolve(a, index, datum_cols), _resolve(b, index, datum_cols))
                try:
                    r = float(r)
                except (TypeError, ValueError):
                    raise CorrelationError(f"correlation between {a} and {b} must be a number, got {r!r}",
                                           key=str(a)) from None
                if not math.isfinite(r) or abs(r) > 1.0:
                    raise CorrelationError(f"correlation between {a} and {b} must lie in [-1, 1], got {r:g}",
                                           key=str(a))
                if i == j:
                    raise CorrelationError(f"correlation of {a} with itself is not allowed", key=str(a))
                if variables[i].datum == variables[j].datum:
                    raise CorrelationError(
                        f"{a} and {b} belong to the same datum {variables[i].datum!r}: give its "
                        "correlation matrix instead", key=str(a))
                k = (min(i, j), max(i, j))
                if k in given and given[k] != r:
                    raise CorrelationError(f"correlation between {a} and {b} given twice "
                                           f"({given[k]:g} and {r:g})", key=str(a))
                given[k] = r
                R[i, j] = R[j, i] = r
        return cls(variables, R)

    # -- basic properties -----------------------------------------------------------------
    def __len__(self) -> int:
        return len(self.variables)

    @property
    def distributions(self) -> list[Distribution]:
        return [v.distribution for v in self.variables]

    def index(self, name: str) -> int:
        """Column index of a variable."""
        try:
            return self.names.index(name)
        except ValueError:
            raise StatisticsError(f"unknown input variable {name!r}", key=name) from None

    def covariance(self) -> np.ndarray:
        """Covariance matrix Σ = diag(u) R diag(u), shape (D, D) (GUM 5.2.2)."""
        s = np.asarray(self.stds)
        if not np.all(np.isfinite(s)):
            bad = [self.names[i] for i in np.flatnonzero(~np.isfinite(s))]
            raise StatisticsError(f"infinite standard uncertainty for {', '.join(bad)} "
                                  "(Student t with dof <= 2)", key=bad[0])
        return s[:, None] * self.correlation * s[None, :]

    def correlated_pairs(self, tol: float = 0.0) -> list[tuple[str, str, float]]:
        """Off-diagonal correlations with |r| > tol as (name_a, name_b, r), upper triangle."""
        iu = np.argwhere(np.triu(np.abs(self.correlation) > tol, 1))
        return [(self.names[i], self.names[j], float(self.correlation[i, j])) for i, j in iu]

    def datum_correlations(self) -> list[tuple[str, str, float]]:
        """Correlations between *different* data (upper triangle, variable names)."""
        d = [v.datum for v in self.variables]
        return [(a, b, r) for a, b, r in self.correlated_pairs()
                if d[self.names.index(a)] != d[self.names.index(b)]]

    def with_scaled_uncertainty(self, factors: Mapping[str, float]) -> InputSet:
        """A copy with the uncertainty of the named data scaled (datum id → factor ≥ 0).

        Each variable's distribution is replaced by ``distribution.scaled(factor)``
        (0 → :class:`Exact` at the estimate). Correlations are kept. Unknown datum ids
        raise :class:`StatisticsError`.
        """
        for k in factors:
            if k not in self.groups:
                raise StatisticsError(f"unknown datum {k!r}", key=str(k))
        new = []
        for v in self.variables:
            f = factors.get(v.datum)
            new.append(v if f is None else InputVariable(v.name, v.datum, v.distribution.scaled(f)))
        out = InputSet(new, None, scale=self.correlation_scale)
        out.correlation = self.correlation  # already validated; identical matrix
        return out

    def subset(self, data: Iterable[str]) -> list[int]:
        """Column indices of the given data (in column order)."""
        cols: list[int] = []
        for k in data:
            if k not in self.groups:
                raise StatisticsError(f"unknown datum {k!r}", key=str(k))
            cols.extend(self.groups[k])
        return sorted(cols)

    # -- sampling -------------------------------------------------------------------------
    def _copula_factor(self):
        """(columns that need the copula, lower factor L with L Lᵀ = R_sub) — cached."""
        if self._factor is None:
            unc = np.flatnonzero(self.stds > 0)
            R = self.correlation[np.ix_(unc, unc)]
            off = R - np.eye(len(unc))
            linked = unc[np.any(off != 0.0, axis=1)] if len(unc) else unc
            if len(linked) == 0:
                self._factor = (linked, None)
            else:
                Rs = self.correlation[np.ix_(linked, linked)]
                if self.correlation_scale == "pearson":
                    Rs = _normal_score_matrix(Rs, [self.variables[int(i)] for i in linked])
                try:
                    L = np.linalg.cholesky(Rs)
                except np.linalg.LinAlgError:
                    # positive semidefinite but singular (e.g. r = ±1): symmetric square root
                    w, V = np.linalg.eigh(Rs)
                    L = V * np.sqrt(np.clip(w, 0.0, None))[None, :]
                self._factor = (linked, L)
        return self._factor

    def from_uniform(self, U: np.ndarray, rotation: np.ndarray | None = None) -> np.ndarray:
        """Map independent uniforms U[N, D] to input samples X[N, D].

        Independent uncertain variables: x_j = G_j⁻¹(u_j) (JCGM 101 §6.3, inverse-CDF
        sampling). Correlated variables (Gaussian copula): z = Φ⁻¹(u) (u clipped to
        [2⁻⁵³, 1 − 2⁻⁵³]), z' = z Lᵀ with L Lᵀ = R (Cholesky; eigen square root when R is
        singular), x_j = G_j⁻¹(Φ(z'_j)). For normal (and lognormal) marginals the last
        step is done exactly as x̂ + u·z' (resp. exp(μ + σz')), so all-normal inputs are
        exactly multivariate normal (JCGM 101 §6.4.8). Exact inputs are constant columns
        and are left out of the factorisation.

        ``rotation``: an orthogonal (K, K) matrix W over the K uncertain variables. The
        first K columns of U then give independent scores z = Φ⁻¹(u), the variables get
        the rotated scores s = W z (again independent standard normal, since W is
        orthogonal) through :meth:`from_scores`, and the other columns of U are unused.
        The distribution of X is unchanged; only which combination of inputs each column
        of U drives changes (a sampling design, see ``uq.montecarlo.score_rotation``).
        """
        U = np.asarray(U, dtype=float)
        d = len(self.variables)
        if U.ndim != 2 or U.shape[1] != d:
            raise StatisticsError(f"uniform sample must have shape (N, {d}), got {U.shape}")
        n = U.shape[0]
        plan = self._transform_plan()
        if rotation is not None:
            k = len(plan["uncertain"])
            W = np.asarray(rotation, dtype=float)
            if W.shape != (k, k):
                raise StatisticsError(f"rotation must have shape ({k}, {k}) (the uncertain variables), got {W.shape}")
            v = np.cos(np.arange(1.0, k + 1.0))   # O(K²) probe: Wᵀ(W v) = v for an orthogonal W
            if k and not np.allclose(W.T @ (W @ v), v, rtol=0.0, atol=1e-9 * np.linalg.norm(v)):
                raise StatisticsError("rotation must be an orthogonal matrix (Wᵀ W = I)")
            Uz = U[:, :k]
            if Uz.size and (Uz.min() < U_CLIP or Uz.max() > 1.0 - U_CLIP):
                Uz = np.clip(Uz, U_CLIP, 1.0 - U_CLIP)
            Z = special.ndtri(Uz, out=scratch("scores", Uz.shape))   # z never leaves this call
            nz, mu, sd = plan["normal"]
            if plan["z_columns"] is Ellipsis and len(nz) == d:   # every input normal and independent:
                X = rows_times(Z, W.T * sd)                       # x = x̂ + u ⊙ (W z), u folded into W
                X += mu
                return X
            return self.from_scores(rows_times(Z, W.T))
        X = np.empty((n, d), dtype=float)
        for j in plan["exact"]:
            X[:, j] = self.variables[j].distribution.estimate
        for j in plan["other"]:
            X[:, j] = self.variables[j].distribution.ppf(np.clip(U[:, j], U_CLIP, 1.0 - U_CLIP))
        zc = plan["z_columns"]
        if zc is not None:
            # one Φ⁻¹ pass over every column that goes through a standard normal (all of U
            # when every input is normal: no gather copy)
            Uz = U if zc is Ellipsis else U[:, zc]
            if Uz.size and (Uz.min() < U_CLIP or Uz.max() > 1.0 - U_CLIP):   # two cheap reductions; clip only if needed
                Uz = np.clip(Uz, U_CLIP, 1.0 - U_CLIP)
            Z = special.ndtri(Uz)
            nz, mu, sd = plan["normal"]
            if zc is Ellipsis and len(nz) == d:
                Z *= sd
                Z += mu
                return Z
            if len(nz):
                X[:, plan["normal_columns"]] = Z[:, nz] * sd + mu
            linked, L = self._copula_factor()
            if L is not None:
                Zc = rows_times(Z[:, plan["linked"]], L.T)
                for k, j in enumerate(linked):
                    X[:, j] = self.variables[j].distribution.from_standard_normal(Zc[:, k])
        return X

    def from_scores(self, S: np.ndarray) -> np.ndarray:
        """Input samples X[N, D] from independent standard normal scores S[N, K].

        Column k of S is the score of the k-th uncertain variable (``np.flatnonzero(stds > 0)``
        in order; exact variables take no score). The same maps as :meth:`from_uniform` with
        z = s: x_j = x̂_j + u_j s_j for an independent normal variable, x_j = G_j⁻¹(Φ(s_j))
        for another independent one, and s' = s_linked Lᵀ, x_j = G_j⁻¹(Φ(s'_j)) for the
        variables of the Gaussian copula (JCGM 101 §6.3, §6.4.8).
        """
        S = np.asarray(S, dtype=float)
        plan = self._transform_plan()
        unc = plan["uncertain"]
        if S.ndim != 2 or S.shape[1] != len(unc):
            raise StatisticsError(f"scores must have shape (N, {len(unc)}) (the uncertain variables), got {S.shape}")
        X = np.empty((S.shape[0], len(self.variables)), dtype=float)
        for j in plan["exact"]:
            X[:, j] = self.variables[j].distribution.estimate
        where = plan["score_of"]
        for j in plan["other"]:
            X[:, j] = self.variables[j].distribution.from_standard_normal(S[:, where[j]])
        normal = plan["normal_columns"]
        if len(normal):
            _, mu, sd = plan["normal"]
            X[:, normal] = S[:, [where[int(j)] for j in normal]] * sd + mu
        linked, L = self._copula_factor()
        if L is not None:
            Zc = rows_times(S[:, [where[int(j)] for j in linked]], L.T)
            for k, j in enumerate(linked):
                X[:, j] = self.variables[j].distribution.from_standard_normal(Zc[:, k])
        return X

    def column_plan(self) -> dict:
        """Which columns are exact, independent normal, other independent, copula-linked (cached).

        Keys: ``"exact"``, ``"other"`` (lists of column indices), ``"normal_columns"`` (array),
        ``"linked_columns"`` (array, the variables of the Gaussian copula, with ``"factor"`` L,
        L Lᵀ = their normal-score correlation matrix, or None), ``"uncertain"`` (array of the
        columns with u > 0), plus the internal layout of :meth:`from_uniform`.
        """
        return self._transform_plan()

    def _transform_plan(self) -> dict:
        """Cached column plan of :meth:`from_uniform` (which columns are exact, normal, copula-linked)."""
        if self._plan is None:
            linked, L = self._copula_factor()
            linked_set = set(int(i) for i in linked) if L is not None else set()
            exact, normal, other = [], [], []
            for j, v in enumerate(self.variables):
                if j in linked_set:
                    continue
                dist = v.distribution
                if dist.std == 0.0:
                    exact.append(j)
                elif dist.kind == "normal":
                    normal.append(j)
                else:
                    other.append(j)
            zcols = sorted(normal + sorted(linked_set))
            pos = {j: i for i, j in enumerate(zcols)}
            d = len(self.variables)
            z_columns = None if not zcols else (Ellipsis if zcols == list(range(d)) else np.array(zcols))
            mu = np.array([self.variables[j].distribution.estimate for j in normal], dtype=float)
            sd = np.array([self.variables[j].distribution.std for j in normal], dtype=float)
            self._plan = {"exact": exact, "other": other, "z_columns": z_columns,
                          "normal": (np.array([pos[j] for j in normal], dtype=np.intp), mu, sd),
                          "normal_columns": np.array(normal, dtype=np.intp),
                          "linked": np.array([pos[int(j)] for j in linked] if L is not None else [], dtype=np.intp),
                          "uncertain": np.flatnonzero(np.asarray(self.stds) > 0),
                          "linked_columns": np.array(sorted(linked_set), dtype=np.intp),
                          "factor": L}
            self._plan["score_of"] = {int(j): k for k, j in enumerate(self._plan["uncertain"])}
        return self._plan

    def describe(self) -> list[dict[str, Any]]:
        """One row per variable: name, datum, distribution text, estimate, u, dof."""
        return [{"name": v.name, "datum": v.datum, "distribution": v.distribution.describe(),
                 "estimate": v.distribution.estimate, "standard_uncertainty": v.distribution.std,
                 "dof": v.distribution.dof} for v in self.variables]

    def __repr__(self) -> str:
        return f"InputSet({len(self.variables)} variables in {len(self.data)} data)"


def _resolve(key: Any, index: Mapping[str, int], datum_cols: Mapping[str, list[int]]) -> int:
    key = str(key)
    if key in datum_cols:
        cols = datum_cols[key]
        if len(cols) != 1:
            raise CorrelationError(
                f"datum {key!r} has {len(cols)} variables: a datum-to-datum correlation is only defined "
                "between single-variable data; correlate its variables individually", key=key)
        return cols[0]
    if key in index:
        return index[key]
    raise StatisticsError(f"correlation refers to unknown datum or variable {key!r}", key=key)


def _covariance_to_correlation(cov: Any, variables: list[InputVariable], datum: str) -> np.ndarray:
    names = [v.name for v in variables]
    n = len(variables)
    try:
        C = np.array(cov, dtype=float)
    except (TypeError, ValueError):
        raise CorrelationError(f"covariance matrix of {datum} must be numeric", key=datum) from None
    if C.shape != (n, n):
        raise CorrelationError(f"covariance matrix of {datum} has shape {C.shape}, expected ({n}, {n})", key=datum)
    if not np.all(np.isfinite(C)):
        raise CorrelationError(f"covariance matrix of {datum} has non-finite entries", key=datum)
    u = np.array([v.distribution.std for v in variables])
    diag = np.diag(C)
    for i in range(n):
        if diag[i] < 0:
            raise CorrelationError(f"covariance matrix of {datum}: negative variance for {names[i]}", key=datum)
        if not math.isclose(math.sqrt(diag[i]), u[i], rel_tol=1e-6, abs_tol=0.0):
            raise CorrelationError(
                f"covariance matrix of {datum}: sqrt(variance) of {names[i]} is {math.sqrt(diag[i]):.6g} but its "
                f"distribution has u = {u[i]:.6g}", key=datum)
    s = np.where(u > 0, u, 1.0)
    R = C / s[:, None] / s[None, :]
    zero = u == 0
    if np.any(np.abs(C[zero]) > 0):
        raise CorrelationError(f"covariance matrix of {datum}: exact variables must have zero rows", key=datum)
    R[zero, :] = 0.0
    R[:, zero] = 0.0
    np.fill_diagonal(R, 1.0)
    return check_correlation(R, names, f"covariance matrix of {datum}")


def _normal_score_matrix(R: np.ndarray, variables: Sequence[InputVariable]) -> np.ndarray:
    """Pairwise NORTA conversion of a Pearson correlation matrix to the copula's normal scores."""
    Z = np.array(R, dtype=float, copy=True)
    n = len(variables)
    for i in range(n):
        for j in range(i + 1, n):
            if R[i, j] != 0.0:
                Z[i, j] = Z[j, i] = normal_score_from_pearson(variables[i].distribution, variables[j].distribution,
                                                              float(R[i, j]), (variables[i].name, variables[j].name))
    w = np.linalg.eigvalsh(Z)
    if w.min() < -PSD_TOL * max(1, n):
        names = [v.name for v in variables]
        err = CorrelationError("the stated correlations cannot be realised together with these distributions "
                               f"(the copula's normal-score matrix is not positive semidefinite; variables: "
                               f"{', '.join(names)})", key=names[0])
        err.variables = names  # type: ignore[attr-defined]
        raise err
    return Z
