"""How the trials of a Monte Carlo run are drawn and evaluated (JCGM 101 §6.3, §6.4.8, §7.2–7.4).

A :class:`TrialDesign` is built once per run (on the client, for Dask) and turns positions
in the run's stream into model values. Three things decide the cost of a trial:

* **Active inputs.** Only the uncertain inputs the model depends on are sampled for it; the
  others stay at their estimates in the rows the model sees. They come from the caller
  (``depends_on``) or, for an affine model, from the nonzero columns of its map; the variables
  of the Gaussian copula are active together. The kept input rows (``X_kept``, the first rows
  of the run) still hold a draw of *every* input: the inactive ones are drawn for those rows
  alone from a companion pseudo-random stream (seeded from the run's seed, by global row).
* **Coordinates.** A trial is a point of the run's stream: pseudo-random sampling draws the
  normal scores z of the normal and copula-linked inputs directly
  (:class:`~uqthermo.uq.sampling.ScoreStream`, ``Generator.standard_normal``) and uniforms v
  for the other inputs; Latin-hypercube sampling draws the same pair as a stratified design
  (:class:`~uqthermo.uq.latin.LatinScoreStream`: Φ⁻¹ of each stratum from a shared table);
  Sobol' sampling draws uniforms (:class:`~uqthermo.uq.sampling.UniformStream`) and maps the
  normal ones through z = Φ⁻¹(u) (``scipy.special.ndtri``). With the Sobol' score rotation W every active input
  is driven by a rotated score s = W z (see :func:`uqthermo.uq.montecarlo.score_rotation`).
  Inputs follow as in :meth:`InputSet.from_uniform`: x = x̂ + u·z for a normal input,
  x = G⁻¹(v) (or G⁻¹(Φ(s))) for another one, z' = z Lᵀ and x = G⁻¹(Φ(z')) in the copula
  (JCGM 101 §6.3, §6.4.8).
* **Affine models.** When the caller declares the model exactly affine in its inputs
  (``affine=True``: e.g. reaction enthalpies at exact temperatures, which are linear in
  formation enthalpies and Cp coefficients) the map y = c + J x is taken from the model by
  one-step differences at x̂ (exact for an affine map, up to rounding) and confirmed on check
  rows spread over the input distribution (:func:`fit_affine`). The input transform is then
  folded into it: y = y(x̂) + Z A with A = diag(u) Jᵀ for independent normal inputs,
  Lᵀ diag(u) Jᵀ over the copula's variables, and Wᵀ(…) with the Sobol' rotation, so a trial
  costs one product of its coordinates with A. Coordinates whose row of A is zero (inputs
  no output uses) or zero up to rounding (after the rotation, score directions orthogonal to
  every output's gradient: below 2⁻⁴⁵ of the output's ‖A‖) are dropped and never mapped
  through Φ⁻¹; what they would add is below 10⁻¹² u(y). Inputs with other distributions keep
  their own term v ↦ G⁻¹(v) in x, still one product with J. Under Sobol' sampling the rotation
  of an affine model is built from this exact map (every direction of its span leads, see
  :func:`~uqthermo.uq.montecarlo.score_rotation`), not from central differences of f: with
  several outputs an affine run and a run through f therefore use different, equally valid
  rotations (one output: the same). Its leading rank(B) coordinates are then the only ones the
  outputs move with, so the Sobol' stream is of that dimension (one for one output; the points
  of a lower-dimensional sequence, so other trials than a run through f draws); the kept rows
  take the completion's coordinates from a companion pseudo-random stream (by global row), so
  each of them is still a draw of the joint input distribution with its own model values.

Every row depends only on its position in the stream (never on where a chunk or a Dask block
ends): products of one row are computed as two rows (BLAS rounds a single row differently).
One exception, at the level of rounding: a Sobol' coordinate is mapped through the stratum
table when the chunk holds a whole power-of-two block of the sequence and through ``ndtri``
otherwise, so its normal scores may differ by a few ulp between chunkings.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence

import numpy as np
from scipy import special

from ..errors import StatisticsError
from .blas import one_blas_thread
from .inputs import U_CLIP, InputSet, cols_times, rows_times
from .latin import LatinScoreStream, stratified_scores
from .sampling import ScoreStream, UniformStream
from .scratch import scratch

__all__ = ["TrialDesign", "fit_affine"]

#: check rows of :func:`fit_affine` (x̂ + 3u·N(0, 1), fixed seed)
AFFINE_CHECK_ROWS = 4
#: relative deviation from the fitted map (of the output's spread over the check rows) that
#: refuses it; rounding of an affine model is ~10⁻¹⁴ of that
AFFINE_RTOL = 1e-9
#: a coordinate is dropped from the folded map when all its |A_km| ≤ DROP_TOL·‖A_:m‖₂
DROP_TOL = 2.0**-45

def fit_affine(f: Callable[[np.ndarray], np.ndarray], inputs: InputSet) -> tuple[np.ndarray, np.ndarray] | None:
    """(y0 = f(x̂) (M,), J (M, D)) of a model that is affine in its inputs, f(x) = y0 + J (x − x̂).

    J_j = [f(x̂ + h_j e_j) − f(x̂)] / h_j with h_j = max(|x̂_j|, u_j) (1 when both are 0):
    exact for an affine f up to rounding, and exactly 0 for an input f does not read. The map
    is returned only if it reproduces f on :data:`AFFINE_CHECK_ROWS` rows x̂ + 3u·z (z standard
    normal, fixed seed) to within 10⁻¹² max|f| + :data:`AFFINE_RTOL` times the spread of f over
    those rows; otherwise (or if f fails or is not finite there) None.
    """
    d = len(inputs)
    x0 = np.asarray(inputs.estimates, dtype=float)
    u = np.asarray(inputs.stds, dtype=float)
    u = np.where(np.isfinite(u), u, 0.0)
    step = np.maximum(np.abs(x0), u)
    step = np.where(step > 0, step, 1.0)
    z = np.random.default_rng(20261202).standard_normal((AFFINE_CHECK_ROWS, d))
    check = x0 + 3.0 * z * np.where(u > 0, u, 0.0)
    rows = np.vstack([x0[None, :], x0[None, :] + np.diag(step), check])
    try:
        with np.errstate(all="ignore"):
            Y = np.asarray(f(rows), dtype=float)
    except Exception:   # a shortcut must never stop the run; the run itself reports model errors
        return None
    if Y.ndim == 1:
        Y = Y[:, None]
    if Y.ndim != 2 or Y.shape[0] != rows.shape[0] or not np.all(np.isfinite(Y)):
        return None
    y0 = Y[0]
    J = ((Y[1:d + 1] - y0) / step[:, None]).T
    got = Y[d + 1:]
    pred = y0 + (check - x0) @ J.T
    tol = 1e-12 * np.abs(Y).max(axis=0) + AFFINE_RTOL * np.abs(got - y0).max(axis=0)
    if not np.all(np.abs(pred - got) <= tol):
        return None
    return y0.copy(), J


class TrialStream:
    """The run's stream of trial coordinates from a given origin (see :meth:`TrialDesign.stream`).

    ``draw(n)`` returns the next n trials as a chunk for :meth:`TrialDesign.evaluate`: a
    (Z, V) pair for pseudo-random and Latin-hypercube sampling, uniforms U for Sobol'. ``chunks(n, size)`` yields
    them in pieces (a Latin-hypercube design of n points stays one design); those chunks may
    share memory with each other and are valid until the next one is drawn.
    """

    def __init__(self, design: "TrialDesign", seed: int, skip: int):
        self.design = design
        if design.method == "random":
            self._scores = ScoreStream(design.score_columns, design.uniform_columns, seed, skip)
            self._uniform = None
        elif design.method == "latin-hypercube":
            self._scores = LatinScoreStream(design.score_columns, design.uniform_columns, seed, skip)
            self._uniform = None
        else:
            self._scores = None
            self._uniform = UniformStream(design.stream_dimension, design.method, seed, skip)

    def draw(self, n: int):
        if self._scores is not None:
            return self._scores.draw(n)
        return self._uniform.draw(n)

    def chunks(self, n: int, chunk_size: int) -> Iterator:
        if self._scores is None or isinstance(self._scores, LatinScoreStream):
            yield from (self._uniform or self._scores).chunks(n, chunk_size)
            return
        done = 0
        while done < n:
            t = min(chunk_size, n - done)
            yield self._scores.draw(t, out=(scratch("z", (self._scores.k, t)).T, scratch("v", (self._scores.m, t)).T))
            done += t


class TrialDesign:
    """Everything that turns stream positions into model values for one run (module docstring).

    Parameters
    ----------
    f : callable
        Vectorised model f(X[N, D]) -> Y[N, M] (or (N,)), row by row.
    inputs : InputSet
    method : {"random", "latin-hypercube", "sobol"}
    seed : int
        The run's seed (also seeds the companion stream of the kept rows' inactive inputs).
    rotation : callable(active columns, gradients=None, values=None) -> W or None, optional
        The Sobol' score rotation over the active inputs (``score_rotation``), or None. For a
        model found affine it is asked again with the model's exact score gradients and its
        values at the estimates.
    affine : bool
        The caller declares f exactly affine in X; the map is fitted and checked
        (:func:`fit_affine`) and trials are evaluated from it (f is then not called per trial).
    depends_on : sequence of int, optional
        The input columns f reads; the others must not change f.

    Attributes
    ----------
    active, inactive : arrays of uncertain input columns (sampled for the model / not)
    rotation : (K, K) array over the active inputs, or None
    n_outputs : M
    affine : bool, whether trials go through the folded affine map
    dimension : coordinates per trial (Sobol', Latin hypercube)
    stream_dimension : coordinates per trial drawn from the run's stream: ``dimension``, or for an
        affine model under the Sobol' rotation the rank of its score map (the leading coordinates)
    """

    def __init__(self, f: Callable[[np.ndarray], np.ndarray], inputs: InputSet, method: str, seed: int, *,
                 rotation: Callable[..., np.ndarray | None] | None = None, affine: bool = False,
                 depends_on: Sequence[int] | None = None):
        self.f = f
        self.inputs = inputs
        self.method = method
        self.seed = int(seed)
        d = len(inputs)
        plan = inputs.column_plan()
        unc = [int(j) for j in plan["uncertain"]]
        L = plan["factor"]
        linked = [int(j) for j in plan["linked_columns"]] if L is not None else []
        fitted = fit_affine(f, inputs) if affine and d else None
        # dep: the columns the model depends on (exact ones included), in column order
        if fitted is not None:
            dep = {j for j in range(d) if np.any(fitted[1][:, j] != 0.0)}
        elif depends_on is not None:
            dep = {int(j) for j in depends_on}
            bad = [j for j in dep if not 0 <= j < d]
            if bad:
                raise StatisticsError(f"depends_on refers to input column {bad[0]} of {d}")
            rest = sorted(set(unc) - dep)
            if rest and not self._unchanged_without(f, rest):
                dep = set(range(d))      # the declaration does not hold: sample every input
        else:
            dep = set(range(d))
        if dep & set(linked):
            dep |= set(linked)
        act = dep & set(unc)
        self.active = np.array(sorted(act), dtype=np.intp)
        self.inactive = np.array([j for j in unc if j not in act], dtype=np.intp)
        W = rotation(self.active) if rotation is not None and len(self.active) else None
        self.rotation = None if W is None else np.asarray(W, dtype=float)
        normal = {int(j) for j in plan["normal_columns"]}
        other = {int(j) for j in plan["other"]}
        active = [int(j) for j in self.active]
        rotated = self.rotation is not None
        # coordinates of a trial: one per dependence column, in column order (so that a column
        # keeps its coordinate when another input becomes exact: common random numbers), or
        # with the rotation one per active input
        self._coords = active if rotated else sorted(dep)
        at = {j: i for i, j in enumerate(self._coords)}
        # score variables: the columns of S, the (rotated) normal scores
        self._score_vars = active if rotated else [j for j in active if j in normal or j in linked]
        self._o_cols = [] if rotated else [j for j in active if j in other]
        self._z_at = np.array([at[j] for j in self._score_vars], dtype=np.intp)
        self._o_at = np.array([at[j] for j in self._o_cols], dtype=np.intp)
        pos = {j: i for i, j in enumerate(self._score_vars)}
        est = np.asarray(inputs.estimates, dtype=float)
        sd = np.asarray(inputs.stds, dtype=float)
        self._normal = [j for j in self._score_vars if j in normal]
        self._n_pos = np.array([pos[j] for j in self._normal], dtype=np.intp)
        self._n_mu, self._n_sd = est[self._normal], sd[self._normal]
        self._s_other = [j for j in self._score_vars if j in other]          # rotated: G⁻¹(Φ(s))
        self._s_other_pos = [pos[j] for j in self._s_other]
        self._linked = linked if any(j in pos for j in linked) else []
        self._l_pos = np.array([pos[j] for j in self._linked], dtype=np.intp)
        self._L = L if self._linked else None
        self.n_scores = len(self._score_vars)
        self.n_uniforms = len(self._o_cols)
        self.dimension = len(self._coords)
        self._z_identity = bool(np.array_equal(self._z_at, np.arange(self.dimension)))
        # columns held at their estimates in the model's rows (exact and inactive inputs)
        driven = set(self._score_vars) | set(self._o_cols)
        self._fixed = [j for j in range(d) if j not in driven]
        self._all_normal = self._normal == list(range(d)) and not self._linked
        self._companion = int(np.random.SeedSequence([self.seed, 0x6B657074]).generate_state(1, np.uint64)[0] >> 1)
        if fitted is not None:
            self.n_outputs = fitted[1].shape[0]
        else:
            with np.errstate(all="ignore"):
                y = np.asarray(f(est[None, :] if d else np.zeros((1, 0))), dtype=float)
            self.n_outputs = 1 if y.ndim == 1 else int(y.shape[1])
        B = self._score_map(fitted[1]) if fitted is not None else None
        if B is not None and self.rotation is not None:
            # an affine model's exact gradients: the rotation's leading columns span them all, so the
            # trials need only rank(B) Sobol' coordinates (see score_rotation)
            W = rotation(self.active, B, fitted[0])
            if W is not None:
                self.rotation = np.asarray(W, dtype=float)
        # rotated scores of the normal columns with u folded in: x = x̂ + (z Wᵀ)[:, pos] ⊙ u in one product
        self._w_sd_n = None if self.rotation is None else self.rotation.T[:, self._n_pos] * self._n_sd
        self._fold = self._folded(fitted, B) if B is not None else None
        self.affine = self._fold is not None
        # Sobol' coordinates drawn per trial: under the rotation an affine model reads only the
        # leading rank(B) ones (its span); the completion's coordinates, which move no output, are
        # drawn for the kept rows alone, from a companion pseudo-random stream
        self.stream_dimension = self.dimension
        if self.method == "sobol" and self.affine and self.rotation is not None and self._z_identity:
            need = self._fold[0]
            if 0 < len(need) < self.dimension and np.array_equal(need, np.arange(len(need))):
                self.stream_dimension = len(need)
        self._padding = int(np.random.SeedSequence([self.seed, 0x70616464]).generate_state(1, np.uint64)[0] >> 1)

    def _unchanged_without(self, f, columns: list[int]) -> bool:
        """Whether f gives bit for bit the same values when ``columns`` move from their estimates
        to a draw of their distribution, on :data:`AFFINE_CHECK_ROWS` · 2 rows of the joint input
        distribution (a check of the caller's ``depends_on``, not a proof)."""
        seed = int(np.random.SeedSequence([self.seed, 0x636865636B]).generate_state(1, np.uint64)[0] >> 1)
        X = self.inputs.from_uniform(UniformStream(len(self.inputs), "random", seed).draw(2 * AFFINE_CHECK_ROWS))
        X0 = X.copy()
        X0[:, columns] = np.asarray(self.inputs.estimates, dtype=float)[columns]
        try:
            with np.errstate(all="ignore"):
                return bool(np.array_equal(np.asarray(f(X), dtype=float), np.asarray(f(X0), dtype=float),
                                           equal_nan=True))
        except Exception:   # cannot confirm it: do not rely on it
            return False

    # ------------------------------------------------------------------ affine map
    def _score_map(self, J: np.ndarray) -> np.ndarray | None:
        """B (n_scores, M), ∂y/∂s of an affine model with map J (M, D) over the score variables:
        u_j J_j for an independent normal input, Lᵀ diag(u) Jᵀ over the copula's variables;
        None when an input is driven by a score through G⁻¹(Φ(s)), not affine in it."""
        dists = [v.distribution for v in self.inputs.variables]
        if self._s_other or any(dists[j].kind != "normal" for j in self._linked):
            return None
        sd = np.asarray(self.inputs.stds, dtype=float)
        B = np.zeros((self.n_scores, J.shape[0]))
        if self._normal:
            B[self._n_pos] = sd[self._normal][:, None] * J[:, self._normal].T
        if self._linked:
            B[self._l_pos] = self._L.T @ (sd[self._linked][:, None] * J[:, self._linked].T)
        return B

    def _folded(self, fitted, B: np.ndarray):
        """(needed coordinates, A (k, M), J of the uniform-driven inputs (k_o, M), y0 − J_o x̂_o)
        of an affine model (y0, J) with score map B (:meth:`_score_map`)."""
        y0, J = fitted
        est = np.asarray(self.inputs.estimates, dtype=float)
        A = B if self.rotation is None else self.rotation.T @ B
        norm = np.linalg.norm(A, axis=0)
        need = np.flatnonzero(np.any(np.abs(A) > DROP_TOL * norm[None, :], axis=1))
        Jo = np.ascontiguousarray(J[:, self._o_cols].T)
        c = y0 - J[:, self._o_cols] @ est[self._o_cols]
        return need, np.ascontiguousarray(A[need]), Jo, c

    @property
    def scored(self) -> bool:
        """Whether chunks are (Z, V) pairs of normal scores and uniforms (pseudo-random and
        Latin-hypercube sampling) rather than uniforms U (Sobol')."""
        return self.method != "sobol"

    @property
    def score_columns(self) -> list[int]:
        """Input columns driven by a normal score (pseudo-random: one score stream each)."""
        return list(self._score_vars)

    @property
    def uniform_columns(self) -> list[int]:
        """Input columns driven by a uniform (their own distribution's G⁻¹)."""
        return list(self._o_cols)

    # ------------------------------------------------------------------ streams
    def stream(self, seed: int | None = None, skip: int = 0) -> TrialStream:
        """The run's stream (``seed`` defaults to the run's; a Sobol' adaptive batch has its own)."""
        return TrialStream(self, self.seed if seed is None else int(seed), int(skip))

    # ------------------------------------------------------------------ chunks
    def rows_of(self, chunk) -> int:
        """Number of trials in a chunk."""
        return int(chunk[0].shape[0] if self.scored else chunk.shape[0])

    def slice(self, chunk, a: int, b: int):
        """Trials a … b − 1 of a chunk, as a chunk."""
        return (chunk[0][a:b], chunk[1][a:b]) if self.scored else chunk[a:b]

    # ------------------------------------------------------------------ evaluation
    @staticmethod
    def _ndtri(U: np.ndarray) -> np.ndarray:
        """z = Φ⁻¹(u) (u clipped to [2⁻⁵³, 1 − 2⁻⁵³]) into a per-thread column-major array, valid
        within one evaluation. A column of a power-of-two block of Sobol' points holds one value
        per stratum and goes through the stratum table (:func:`~uqthermo.uq.latin.stratified_scores`,
        a few ulp of ``ndtri``); any other column through ``scipy.special.ndtri``."""
        if U.size and (U.min() < U_CLIP or U.max() > 1.0 - U_CLIP):   # two cheap reductions; clip only if needed
            U = np.clip(U, U_CLIP, 1.0 - U_CLIP)
        out = scratch("ndtri", (U.shape[1], U.shape[0]))
        for j in range(U.shape[1]):
            col = U[:, j]                          # a strided view: both read it without a copy
            if not stratified_scores(col, out[j]):
                special.ndtri(col, out=out[j])
        return out.T

    def _coordinates(self, chunk, rows: slice | None = None, need: np.ndarray | None = None):
        """(Z scores of the coordinates ``need`` (all by default), V uniforms) of a chunk's rows."""
        if self.scored:
            Z, V = chunk
            if rows is not None:
                Z, V = Z[rows], V[rows]
            return (Z if need is None else Z[:, need]), V
        U = chunk if rows is None else chunk[rows]
        at = self._z_at if need is None else self._z_at[need]
        # columns in order (a need of sorted coordinates, as many as the chunk has: all of them, or
        # the leading ones a chunk of the stream_dimension holds) are the chunk itself
        Uz = U if len(at) == U.shape[1] and self._z_identity else U[:, at]
        return self._ndtri(Uz), U[:, self._o_at]

    def _inputs(self, Z: np.ndarray, V: np.ndarray) -> np.ndarray:
        """Input rows X (n, D) from coordinates (all of them); inactive inputs at their estimates.

        Column-major, so that each input column is written (and read by the model) contiguously.
        """
        n, d = Z.shape[0], len(self.inputs)
        if self._all_normal:    # every column an independent normal, in column order: x = x̂ + u ⊙ (W z)
            if self.rotation is None:
                X = np.multiply(Z, self._n_sd, order="F")
                X += self._n_mu
                return X
            with one_blas_thread():     # tall and skinny: one thread (see uq/blas.py)
                XT = cols_times(Z, self._w_sd_n)     # every column normal, in order
            XT += self._n_mu[:, None]
            return XT.T
        X = np.empty((n, d), order="F")
        XT = X.T                        # one contiguous row per input column
        est = np.asarray(self.inputs.estimates, dtype=float)
        if self._fixed:
            XT[self._fixed] = est[self._fixed][:, None]
        dists = self.inputs.variables
        if self.rotation is None:
            S = Z
            for j, p, u, x0 in zip(self._normal, self._n_pos, self._n_sd, self._n_mu):
                col = X[:, j]
                np.multiply(S[:, p], u, out=col)
                col += x0
        else:
            with one_blas_thread():     # tall and skinny: one thread (see uq/blas.py)
                if self._normal:
                    Xn = cols_times(Z, self._w_sd_n)
                    Xn += self._n_mu[:, None]
                    XT[self._normal] = Xn
                # the other rotated scores: all of them for the copula, else only those they drive
                S = rows_times(Z, self.rotation.T) if self._linked else None
                so = (S[:, self._s_other_pos] if S is not None
                      else rows_times(Z, self.rotation.T[:, self._s_other_pos]) if self._s_other else None)
            for i, j in enumerate(self._s_other):
                X[:, j] = dists[j].distribution.from_standard_normal(so[:, i])
        for i, j in enumerate(self._o_cols):
            X[:, j] = dists[j].distribution.ppf(np.clip(V[:, i], U_CLIP, 1.0 - U_CLIP))
        if self._linked:
            Zl = rows_times(S[:, self._l_pos], self._L.T)
            for i, j in enumerate(self._linked):
                X[:, j] = dists[j].distribution.from_standard_normal(Zl[:, i])
        return X

    def _padded(self, chunk, t: int, row0: int):
        """The chunk's first t trials with every coordinate: a Sobol' chunk of the leading
        ``stream_dimension`` coordinates gets the completion's from the companion pseudo-random
        stream, by global row (each kept row is then still a draw of the joint input distribution,
        and its model values are those of the chunk: no output moves with those coordinates)."""
        first = self.slice(chunk, 0, t)
        if self.scored or self.stream_dimension == self.dimension:
            return first
        rest = UniformStream(self.dimension - self.stream_dimension, "random", self._padding, skip=row0).draw(t)
        return np.hstack([first, rest])

    def _fill_inactive(self, X: np.ndarray, row0: int) -> None:
        """Kept rows: draw the inactive inputs from the companion stream, by global row."""
        if len(self.inactive) and X.shape[0]:
            Uc = UniformStream(len(self.inputs), "random", self._companion, skip=row0).draw(X.shape[0])
            X[:, self.inactive] = self.inputs.from_uniform(Uc)[:, self.inactive]

    def evaluate(self, chunk, row0: int, keep_rows: int) -> tuple[np.ndarray, np.ndarray]:
        """(X of the chunk's rows whose global index is below ``keep_rows``, Y (n, M)).

        ``chunk`` comes from a :class:`TrialStream`; ``row0`` is the global index of its first
        row (for the kept rows' companion draws). Y is column-major (one output per
        contiguous row of Y.T) and finite (a model that returns non-finite values raises).
        """
        n = self.rows_of(chunk)
        t = int(max(0, min(n, keep_rows - row0)))
        if self._fold is not None:
            need, A, Jo, c = self._fold
            Z, V = self._coordinates(chunk, need=None if len(need) == self.n_scores else need)
            M = A.shape[1]
            YT = np.empty((M, n))
            with one_blas_thread():     # tall and skinny: one thread (see uq/blas.py)
                if n == 1:     # one row as two: BLAS rounds a single row differently
                    YT[:] = (A.T @ np.vstack([Z, Z]).T)[:, :1] if len(need) else 0.0
                elif len(need):
                    np.matmul(A.T, Z.T, out=YT)
                else:
                    YT[:] = 0.0
                YT += c[:, None]
                if len(self._o_cols):
                    Xo = np.empty_like(V)
                    for i, j in enumerate(self._o_cols):
                        Xo[:, i] = self.inputs.variables[j].distribution.ppf(np.clip(V[:, i], U_CLIP, 1.0 - U_CLIP))
                    YT += rows_times(Xo, Jo).T
            Xk = self._inputs(*self._coordinates(self._padded(chunk, t, row0))) if t else np.empty((0, len(self.inputs)))
            self._fill_inactive(Xk, row0)
            return Xk, YT.T
        X = self._inputs(*self._coordinates(chunk))
        Y = np.asarray(self.f(X), dtype=float)
        if Y.ndim == 1:
            Y = Y[:, None]
        if Y.ndim != 2 or Y.shape[0] != n:
            raise StatisticsError(f"model must return shape (N, M) for N = {n} input rows, got {Y.shape}")
        if Y.shape[1] != self.n_outputs:
            raise StatisticsError(f"model returned {Y.shape[1]} outputs, earlier {self.n_outputs}")
        if not np.isfinite(np.add.reduce(Y, axis=0)).all():   # a sum is finite if every term is
            bad = ~np.all(np.isfinite(Y), axis=1)
            if np.any(bad):
                raise StatisticsError(f"model returned non-finite values for {int(bad.sum())} of {n} "
                                      f"samples in a chunk (first at input row {int(np.flatnonzero(bad)[0])})")
        Xk = X[:t].copy()
        self._fill_inactive(Xk, row0)
        return Xk, Y
