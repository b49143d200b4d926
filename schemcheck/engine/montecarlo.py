"""Monte Carlo of every op-amp output error (pure, numpy).

Each sample draws every resistor uniformly within its tolerance and every op-amp's Vos,
Ib and Ios from a Gaussian with the datasheet maximum as 3 sigma, truncated at that
maximum (a tested maximum is never exceeded), each with a random sign; Ib+ = Ib + Ios/2,
Ib- = Ib - Ios/2. The bound is the 99.7th percentile of the output error's magnitude (in
volts), at the worse end of the temperature range. With the parameters truncated, a
sample at nominal resistor values lies within the worst case; resistor tolerances can
still carry the bound past the worst case, which uses nominal values (a bias current
through mismatched resistors): that is what they are sampled for.

How each sample's network is solved (``solve``):

* ``"update"`` (the default): the solver's inverse of the nominal matrix A0 is reused
  for every sample. A sample changes the conductance of resistor r by d_r, a rank-one
  change ``d_r e_r e_r^T`` (e_r = the resistor's incidence vector), so with D = [e_r]
  and Delta = diag(d) the Sherman-Morrison-Woodbury identity gives the output errors

      y = y0 - Z^T Delta u,   (I + C Delta) u = q,

  with y0 = B0 z (nominal sensitivities times the drawn parameters z), q = D^T x0 (the
  nominal voltage across each resistor), Z = D^T A0^-T e_out and C = D^T A0^-1 D, all
  from the one inverse. The small system is solved by its Neumann series
  ``u <- q - C Delta u``, whose ratio is of the order of the resistor tolerance, until
  what it may still change is below CONVERGED of its first term; a sample whose series
  does not settle is solved in full. Where the powers of |C| diag(tol / (1 - tol)) show
  that every sample the tolerances allow settles within m terms (:func:`_known_terms`),
  m terms are run without testing on the way. Stopping after the first term would be the
  first-order expansion around nominal (``max_iterations=0``), which misses the 1 %
  agreement with the full solve for a bias current cancelled by 5 % resistors (see
  benchmarks/bench_montecarlo.py). The per-sample work is in float32.
* ``"full"``: every sample's MNA matrix is built and solved (``numpy.linalg.solve``,
  float64): the reference the update is tested against. Both use the same draws.

Draws: each is one of 65536 equally likely levels (16 random bits): a resistor's value
is at the middle of one of 65536 equal steps across its tolerance band, a parameter at
the quantile of the middle of one of 65536 equal steps of probability (a table). The
draws come from the seed and the network's shape (unknowns, resistors, sources, outputs)
alone: networks of one shape share them, so a stage's bound does not move when a stage
of another network is added to the design (beyond the float32 rounding of work shared in a
block, about 1e-7, and unless the work limit cuts the samples), two identical stages with
networks of their own get the same bound, and the products of a block of networks with
the draws are one matrix product each.

Bounded resources: samples are drawn and solved in chunks of about ``CHUNK_VALUES``
numbers, and the percentile keeps only the upper tail it needs (0.3 % of the samples, for
the networks of a segment at once), so the arrays do not grow with the number of samples
or stages and the tails grow only with their product, which the work limit bounds. Where
the work for the requested samples exceeds ``WORK_LIMIT``, fewer samples are used and a
note says so; a network too large for even ``MIN_SAMPLES`` samples gets no Monte Carlo
figure, with a note.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from schemcheck.engine.budget import Figures, figures_once, reaching, total_at
from schemcheck.engine.dcerror import Solution, System
from schemcheck.engine.network import Network
from schemcheck.engine.params import OpampParams, at_temperature

MC_PERCENTILE = 99.7
SOLVES = ("update", "full")
TRUNCATE_SIGMA = 3.0  # the maximum is 3 sigma; the distribution is cut there
CHUNK_VALUES = 1 << 19  # numbers of one chunk (arrays of a few hundred kB: measured fastest)
WORK_LIMIT = 4.0e10  # work units (see _cost; a few seconds) of one design's Monte Carlo
MIN_SAMPLES = 1000  # fewer would leave the 99.7 % bound to a handful of samples
MAX_ITERATIONS = 40  # update series terms before a sample is solved in full
CONVERGED = 1e-5  # what the update series may still change, relative to its first term
_ROUNDING = 1e-6  # a change this small (relative) is the float32 rounding of the series
_LEVELS = 1 << 16  # each draw is one of 65536 equally likely levels (16 random bits)
#: samples per chunk: small products stay below OpenBLAS's threading threshold (about
#: 2.6e5 multiply-adds a call), whose thread hand-offs stall on a busy machine
_CHUNK_SAMPLES = 16384
_FULL_MATRIX_VALUES = 1 << 22  # entries of the stacked per-sample matrices of one sub-chunk
_SEGMENT_VALUES = 1 << 23  # numbers of the per-network tables held at once


@dataclass(slots=True)
class MonteCarloRun:
    """Bounds in volts per op-amp output (None: not computed), the samples behind each
    bound, notes."""

    bounds: dict[int, float | None] = field(default_factory=dict)
    samples: dict[int, int] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)


@dataclass(slots=True)
class _Network:
    """One network's Monte Carlo inputs."""

    system: System
    outputs: list[int]  # op-amp indices in out_rows order
    names: list[str]  # their references, for notes
    res_a: np.ndarray  # matrix rows of the varied resistors' ends (-1 = a fixed net)
    res_b: np.ndarray
    g0: np.ndarray  # nominal conductance, siemens
    tol: np.ndarray  # relative tolerance
    mix: np.ndarray  # (rhs columns, 3 per op-amp): source values per unit draw

    @property
    def inverse(self) -> np.ndarray:
        """The nominal inverse (only a solved system is prepared)."""
        inverse = self.system.inverse
        if inverse is None:
            raise ValueError(f"the network of {', '.join(self.names)} has no nominal inverse")
        return inverse

    @property
    def shape(self) -> tuple[int, int, int, int]:
        return (self.system.base.shape[0], len(self.tol), self.mix.shape[1], len(self.outputs))


def _prepare(network: Network, solution: Solution, params: list[OpampParams], system: System,
             temp_range: tuple[float, float], figures: Figures = at_temperature) -> _Network:
    low, high = temp_range
    solved = {k: reaching(solution, k) for k in system.out_rows if solution.status[k] == "ok"}
    temp = max(sorted({low, high}, reverse=True),
               key=lambda t: sum(total_at(solution, k, params, t, high, sources, figures)
                                 for k, sources in solved.items()))
    opamps = {j: n for n, j in enumerate(system.component.opamps)}
    mix = np.zeros((len(system.columns), 3 * len(opamps)))
    for c, (j, source) in enumerate(system.columns):
        if source == "unknown":
            continue
        p = figures(params[j], temp, high)
        z = 3 * opamps[j]
        if source == "vos":
            mix[c, z] = (p.vos or 0.0) / TRUNCATE_SIGMA
        else:
            sign = 1.0 if source == "ib_plus" else -1.0
            mix[c, z + 1] = (p.ib or 0.0) / TRUNCATE_SIGMA
            mix[c, z + 2] = sign * (p.ios or 0.0) / TRUNCATE_SIGMA / 2.0
    parts = system.component.resistors
    varied = [r for r, ((a, b), part) in enumerate(zip(system.stamps, parts))
              if part.tolerance > 0.0 and (a >= 0 or b >= 0)]
    ends = np.array([system.stamps[r] for r in varied], dtype=int).reshape(-1, 2)
    tolerance = [parts[r].tolerance for r in varied]
    return _Network(system, list(system.out_rows),
                    [_name(network, k) for k in system.out_rows], ends[:, 0], ends[:, 1],
                    system.conductance[varied], np.array(tolerance), mix)


def _cost(shape: tuple[int, int, int, int], solve: str) -> float:
    """Work units (about one multiply-add of a large product each) of one sample of one
    network: drawing and handling a number counts 40, as measured against the products."""
    size, n_res, n_z, n_out = shape
    handled = 40 * (n_res + n_z + n_out)
    if solve == "full":
        return handled + 40 * (size * size + 4 * n_res) + size ** 3
    return handled + n_res * n_z + n_out * (n_z + n_res) + 6 * n_res * n_res


def monte_carlo_run(network: Network, solution: Solution, params: list[OpampParams],
                    temp_range: tuple[float, float], samples: int, seed: int,
                    solve: str = "update", *, work_limit: float = WORK_LIMIT,
                    chunk_values: int = CHUNK_VALUES,
                    max_iterations: int = MAX_ITERATIONS) -> MonteCarloRun:
    """The 99.7th-percentile output error of every solved op-amp (volts).

    ``samples`` per network, fewer where the work would exceed ``work_limit`` (stated in
    the notes). ``max_iterations`` = 0 stops the update at the first-order expansion.
    """
    if solve not in SOLVES:
        raise ValueError(f"solve must be one of {', '.join(SOLVES)}, not {solve!r}")
    run = MonteCarloRun()
    if samples <= 0:
        return run
    nets: list[_Network] = []
    figures = figures_once()
    for system in solution.systems:
        if system.inverse is None or not system.out_rows:
            run.bounds.update({k: None for k in system.out_rows})
            continue
        nets.append(_prepare(network, solution, params, system, temp_range, figures))
    too_large = [n for n in nets if _cost(n.shape, solve) * MIN_SAMPLES > work_limit]
    nets = [n for n in nets if _cost(n.shape, solve) * MIN_SAMPLES <= work_limit]
    for net in too_large:
        run.bounds.update({k: None for k in net.outputs})
        refs = ", ".join(net.names)
        run.notes.append(f"Monte Carlo: the network of {refs} ({net.shape[0]} unknowns, "
                         f"{net.shape[1]} resistors with a tolerance) is too large for "
                         f"{MIN_SAMPLES} samples within the work limit; no Monte Carlo bound")
    work = sum(_cost(n.shape, solve) for n in nets)
    used = samples
    if work * samples > work_limit:
        used = min(samples, max(MIN_SAMPLES, int(work_limit // work)))
        if used < samples:
            run.notes.append(f"Monte Carlo: {used} samples used of the {samples} requested: "
                             "the design's networks need more work than the limit for more")
    groups: dict[tuple[int, int, int, int], list[_Network]] = {}
    for net in nets:
        groups.setdefault(net.shape, []).append(net)
    for shape, members in sorted(groups.items()):
        _run_group(solution, params, members, shape, used, seed, solve, run,
                   chunk_values, max_iterations)
    return run


def _name(network: Network, k: int) -> str:
    part = network.opamps[k].unit.part
    return part.ref if part.unit_count == 1 else f"{part.ref}/{part.unit}"


def _tail_size(samples: int) -> int:
    """How many of the largest values the percentile needs (numpy's 'linear' method)."""
    return samples - math.floor((samples - 1) * MC_PERCENTILE / 100.0)


def _run_group(solution: Solution, params: list[OpampParams], members: list[_Network],
               shape: tuple[int, int, int, int], samples: int, seed: int,
               solve: str, run: MonteCarloRun, chunk_values: int, max_iterations: int) -> None:
    """Same-shape networks, in blocks that fill a chunk; samples last in every array, so
    each per-network product is a long contiguous numpy loop."""
    _, n_res, n_z, n_out = shape
    width = 3 * n_res + 2 * n_z + 2 * n_out
    keep = _tail_size(samples)
    per_chunk = min(samples, max(keep, min(_CHUNK_SAMPLES, chunk_values // width)))
    per_block = max(1, chunk_values // (width * per_chunk))
    quantiles = _normal_quantiles()
    # networks whose nominal matrices and update tables are held at once: about
    # _SEGMENT_VALUES numbers
    size = shape[0] + 1
    footprint = 3 * size * size + (3 * n_res + n_z + n_out) * size + 2 * n_res * n_res + 64
    per_segment = max(1, _SEGMENT_VALUES // (footprint * per_block)) * per_block
    for offset in range(0, len(members), per_segment):
        segment = members[offset:offset + per_segment]
        full = _Full(segment)
        model = _Model(segment, full) if solve == "update" else None
        blocks = [slice(first, min(len(segment), first + per_block))
                  for first in range(0, len(segment), per_block)]
        tails = [_UpperTail(keep, per_chunk) for _ in blocks]
        undefined = [np.zeros((b.stop - b.start, n_out), dtype=bool) for b in blocks]
        # the draws depend on the seed and the networks' shape alone: every network of
        # the shape sees the same ones, whatever else the design holds
        rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=shape))
        for start in range(0, samples, per_chunk):
            n = min(per_chunk, samples - start)
            levels = _uniform_levels(rng, (n_res + n_z, n))
            # resistor r: R = R0 (1 + tol v), v at the middle of one of _LEVELS equal steps
            # across [-1, 1]; its conductance changes by 1 / (1 + tol v) - 1
            position = levels[:n_res].astype(np.float32)
            position *= np.float32(2.0 / _LEVELS)
            position += np.float32(1.0 / _LEVELS - 1.0)
            draws = quantiles[levels[n_res:]]  # (n_z, n)
            last = start + n >= samples
            # one row of conductance changes for all where every tolerance is the same
            shared = _relative(full.tol, position) if full.same_tolerances else None
            for block, tail, bad in zip(blocks, tails, undefined):
                relative = shared if shared is not None else _relative(full.tol[block],
                                                                       position)
                if model is not None:
                    errors = model.outputs(block, relative, draws, max_iterations)
                else:
                    errors = full.outputs(block, relative, draws)
                np.abs(errors, out=errors)
                if not np.isfinite(errors.max()):  # a singular sample, or overflow (nan too)
                    bad |= ~np.isfinite(errors).all(axis=2)
                count = block.stop - block.start
                tail.add(errors.reshape(count * n_out, n))
                if not last:
                    tail.shrink()  # every block's tail is held at once: only what it needs
                    continue
                bounds = tail.percentile().reshape(count, n_out)
                bounds[bad] = np.nan
                for g, net in enumerate(segment[block]):
                    _record(solution, params, net, bounds[g], samples, run)


def _relative(tol: np.ndarray, position: np.ndarray) -> np.ndarray:
    """The conductance changes (G, n_res, n), float32, of resistors of tolerances ``tol``
    (G, n_res) at the positions ``position`` (n_res, n) across their bands; one row (1,
    n_res, n) for all where the tolerances are the same in every network."""
    if len(tol) > 1 and not (tol == tol[0]).all():
        t = tol.astype(np.float32)[:, :, None] * position
    else:
        t = tol[:1].astype(np.float32)[:, :, None] * position
    # 1 / (1 + t) - 1 = -t / (1 + t), without the rounding of the subtraction
    return -t / (1.0 + t)


def _record(solution: Solution, params: list[OpampParams], net: _Network, bounds: np.ndarray,
            samples: int, run: MonteCarloRun) -> None:
    """One network's bounds; None where an output is not solved, depends on an undefined
    output or on an op-amp without parameters, or a sample had no solution (nan)."""
    incomplete = {j for j in net.system.component.opamps if not params[j].complete}
    for column, k in enumerate(net.outputs):
        if (solution.status[k] != "ok" or solution.tainted[k]
                or any(j in incomplete for j in reaching(solution, k))):
            run.bounds[k] = None
        elif not math.isfinite(bounds[column]):
            run.bounds[k] = None
            run.notes.append(f"Monte Carlo of {net.names[column]}: some resistor values within "
                             "their tolerance leave its network without a solution (singular); "
                             "no Monte Carlo bound")
        else:
            run.bounds[k] = float(bounds[column])
            run.samples[k] = samples


def prepare() -> None:
    """Build the tables every Monte Carlo uses (before worker processes are forked)."""
    _normal_quantiles()


def _uniform_levels(rng: np.random.Generator, shape: tuple[int, ...]) -> np.ndarray:
    """Independent uniform draws of the levels 0 .. _LEVELS - 1 (uint16), four from each
    64-bit output of the generator."""
    count = math.prod(shape)
    raw = rng.bit_generator.random_raw(-(-count // 4))
    return raw.view(np.uint16)[:count].reshape(shape)


@lru_cache(maxsize=1)
def _normal_quantiles() -> np.ndarray:
    """The standard normal truncated to +-TRUNCATE_SIGMA as _LEVELS equally likely
    values: its quantiles at the probabilities (i + 1/2) / _LEVELS (float32).

    From the normal CDF (math.erfc) on a grid 2.5e-4 sigma apart, inverted by linear
    interpolation (to about 1e-7 sigma). Drawing level i uniformly is inverse-transform
    sampling with the probability rounded to the middle of its 1/65536 step: at 3 sigma,
    where the steps are widest, a draw is within 2e-3 sigma of the exact quantile."""
    grid = np.linspace(-TRUNCATE_SIGMA, TRUNCATE_SIGMA, 24_001)
    cdf = np.array([0.5 * math.erfc(-x / math.sqrt(2.0)) for x in grid])
    cdf = (cdf - cdf[0]) / (cdf[-1] - cdf[0])
    return np.interp((np.arange(_LEVELS) + 0.5) / _LEVELS, cdf, grid).astype(np.float32)


class _Full:
    """Stacked MNA systems of same-shape networks, solved sample by sample."""

    def __init__(self, members: list[_Network]) -> None:
        self.base = np.stack([n.system.matrix() for n in members])  # (G, size, size)
        self.rhs = np.stack([n.system.rhs @ n.mix for n in members])  # (G, size, n_z)
        self.out_rows = np.array([list(n.system.out_rows.values()) for n in members])
        self.res_a = np.stack([n.res_a for n in members])  # (G, n_res)
        self.res_b = np.stack([n.res_b for n in members])
        self.g0 = np.stack([n.g0 for n in members])  # siemens
        self.tol = np.stack([n.tol for n in members])
        self.same_tolerances = bool((self.tol == self.tol[:1]).all())
        size, n_res = self.base.shape[1], self.g0.shape[1]
        # each resistor's four stamp entries as flat positions in the matrix, with signs
        positions, signs, owners = [], [], []
        for r in range(n_res):
            a, b = self.res_a[:, r], self.res_b[:, r]
            for p, q, sign in ((a, a, 1.0), (b, b, 1.0), (a, b, -1.0), (b, a, -1.0)):
                valid = (p >= 0) & (q >= 0)
                positions.append(np.where(valid, p * size + q, 0))
                signs.append(np.where(valid, sign, 0.0))
                owners.append(r)
        self.positions = np.array(positions, dtype=int).T.reshape(len(members), 4 * n_res)
        self.signs = np.array(signs, dtype=float).T.reshape(len(members), 4 * n_res)
        self.owners = np.array(owners, dtype=int)
        self.base_flat = self.base.reshape(len(members), size * size)
        self.stamps = None
        if len(members) * 4 * n_res * size * size <= 1 << 22:  # one-hot: entry -> position
            self.stamps = np.zeros((len(members), 4 * n_res, size * size))
            np.put_along_axis(self.stamps, self.positions[:, :, None], 1.0, axis=2)

    def outputs(self, block: slice, relative: np.ndarray, draws: np.ndarray) -> np.ndarray:
        """Output errors (G, n_out, n), volts, of the networks ``block`` (relative:
        (G, n_res, n) conductance changes, or one row for all; draws: (n_z, n) truncated
        unit normals, the same for every network)."""
        n = relative.shape[2]
        count = block.stop - block.start
        relative = np.broadcast_to(relative, (count, *relative.shape[1:]))
        out = np.empty((count, self.out_rows.shape[1], n))
        for i, network in enumerate(range(block.start, block.stop)):
            out[i] = self.solve(np.full(n, network), relative[i].T, draws.T).T
        return out

    def solve(self, g: np.ndarray, relative: np.ndarray, draws: np.ndarray) -> np.ndarray:
        """Output errors (samples, n_out) of single samples of the networks ``g``, each
        solved in full, in sub-chunks of bounded size."""
        size = self.base.shape[1]
        out = np.empty((len(g), self.out_rows.shape[1]))
        step = max(1, _FULL_MATRIX_VALUES // (size * size))
        for start in range(0, len(g), step):
            part = slice(start, start + step)
            out[part] = self._solve(g[part], relative[part], draws[part])
        return out

    def _solve(self, g: np.ndarray, relative: np.ndarray, draws: np.ndarray) -> np.ndarray:
        size = self.base.shape[1]
        delta = relative.astype(float) * self.g0[g]
        values = delta[:, self.owners] * self.signs[g]
        if self.stamps is not None:  # small networks: the stamps as a product per network
            networks = np.unique(g)
            if len(networks) == 1:
                a = values @ self.stamps[networks[0]] + self.base_flat[networks[0]]
            else:
                a = np.empty((len(g), size * size))
                for network in networks:
                    mine = g == network
                    a[mine] = values[mine] @ self.stamps[network] + self.base_flat[network]
        else:
            a = self.base_flat[g]
            rows = np.broadcast_to(np.arange(len(g))[:, None], values.shape)
            np.add.at(a, (rows, self.positions[g]), values)
        b = np.einsum("sij,sj->si", self.rhs[g], draws.astype(float))
        x = _solve_each(a.reshape(len(g), size, size), b)
        return np.take_along_axis(x, self.out_rows[g], axis=1)


def _solve_each(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Stacked solves; nan for a singular sample (the caller reports no bound)."""
    try:
        return np.linalg.solve(a, b[..., None])[..., 0]
    except np.linalg.LinAlgError:
        x = np.full(b.shape, np.nan)
        for i in range(len(a)):
            try:
                x[i] = np.linalg.solve(a[i], b[i])
            except np.linalg.LinAlgError:
                pass
        return x


class _Model:
    """What the low-rank update of a sample needs from the nominal inverse of each of
    same-shape networks (see the module's docstring), in float32."""

    def __init__(self, members: list[_Network], full: _Full) -> None:
        self.full = full
        count, size = full.base.shape[0], full.base.shape[1]
        inverse = np.zeros((count, size + 1, size + 1))  # row/column `size`: fixed nets (0)
        inverse[:, :size, :size] = np.stack([n.inverse for n in members])
        x0 = np.zeros((count, size + 1, full.rhs.shape[2]))
        x0[:, :size] = inverse[:, :size, :size] @ full.rhs
        a = np.where(full.res_a >= 0, full.res_a, size)  # (G, n_res)
        b = np.where(full.res_b >= 0, full.res_b, size)
        out = full.out_rows
        take = lambda m, rows: np.take_along_axis(m, rows[:, :, None], axis=1)  # noqa: E731
        # per unit draw: the nominal output errors (the sensitivities) and the nominal
        # voltage across each resistor; samples last, so these multiply from the left
        self.nominal = np.ascontiguousarray(take(x0, out), dtype=np.float32)  # (G, n_out, n_z)
        self.across = np.ascontiguousarray(take(x0, a) - take(x0, b), dtype=np.float32)
        g0 = full.g0[:, None, :]
        rows_out = take(inverse, out)  # (G, n_out, size + 1)
        reach = (np.take_along_axis(rows_out, a[:, None, :], axis=2)
                 - np.take_along_axis(rows_out, b[:, None, :], axis=2)) * g0
        self.reach = np.ascontiguousarray(reach, dtype=np.float32)  # (G, n_out, n_res)
        across = take(inverse, a) - take(inverse, b)  # (G, n_res, size + 1)
        coupling = (np.take_along_axis(across, a[:, None, :], axis=2)
                    - np.take_along_axis(across, b[:, None, :], axis=2)) * g0
        self.coupling = np.ascontiguousarray(coupling, dtype=np.float32)  # (G, n_res, n_res)
        self.terms = _known_terms(coupling, full.tol)  # (G,), -1: not known

    def outputs(self, block: slice, relative: np.ndarray, draws: np.ndarray,
                max_iterations: int) -> np.ndarray:
        """Output errors (G, n_out, n), volts, of the networks ``block`` (relative:
        (G, n_res, n) conductance changes, or one row for all; draws: (n_z, n) truncated
        unit normals, the same for every network): one product for the whole block."""
        count = block.stop - block.start
        n = draws.shape[1]
        nominal = self.nominal[block]
        errors = (nominal.reshape(-1, nominal.shape[2]) @ draws).reshape(count, -1, n)
        if relative.shape[1] == 0:
            return errors
        coupling = self.coupling[block]
        across = self.across[block]
        q = (across.reshape(-1, across.shape[2]) @ draws).reshape(count, -1, n)  # (G, n_res, n)
        product = np.empty_like(q)
        known = self.terms[block]
        if max_iterations and (known >= 0).all() and known.max() <= max_iterations:
            # the series is shown to settle within `known` terms: no test on the way
            u = q
            for _ in range(int(known.max())):
                np.multiply(relative, u, out=product)
                u = np.matmul(coupling, product)
                np.subtract(q, u, out=u)
            np.multiply(relative, u, out=product)
            errors -= self.reach[block] @ product
            return errors
        scale = np.abs(q).reshape(count, -1).max(axis=1) + 1e-30
        u = q
        change = np.empty_like(q)
        previous = scale
        done = np.zeros(count, dtype=bool)
        for iteration in range(max_iterations):
            np.multiply(relative, u, out=product)
            step = np.matmul(coupling, product)
            np.subtract(q, step, out=step)
            np.subtract(step, u, out=change)
            np.abs(change, out=change)
            u = step
            largest = change.reshape(count, -1).max(axis=1)
            ratio = np.minimum(largest / np.maximum(previous, 1e-30), 0.999)
            previous = largest
            # the series shrinks by `ratio` a term: what it may still change is below
            # change r / (1 - r); or it has reached the rounding of the float32 work
            done = ((largest * ratio / (1.0 - ratio) <= CONVERGED * scale)
                    | (largest <= _ROUNDING * scale))
            if done.all() or (iteration >= 2 and (ratio[~done] > 0.9).any()):
                break
        np.multiply(relative, u, out=product)
        errors -= self.reach[block] @ product
        if max_iterations and not done.all():
            # samples of a slow or diverging series (nan included) are solved in full
            moving = ~(change <= CONVERGED * scale[:, None, None]) & ~done[:, None, None]
            g, s = np.nonzero(moving.any(axis=1))
            if g.size:
                every = np.broadcast_to(relative, product.shape)
                errors[g, :, s] = self.full.solve(g + block.start, every[g, :, s],
                                                  draws[:, s].T)
        return errors


#: the most terms a series may be shown to need before its samples are run
_MOST_KNOWN_TERMS = 12


def _known_terms(coupling: np.ndarray, tol: np.ndarray) -> np.ndarray:
    """Per network (coupling C: (G, n_res, n_res); tol: (G, n_res)), a number of terms m
    after which the update series u = sum_i (-C Delta)^i q cannot change by more than
    CONVERGED of max|q| for any sample; -1 where that is not shown within
    _MOST_KNOWN_TERMS terms (the terms are then counted as they go).

    Every |d_r| = |t| / (1 + t) with |t| <= tol_r is at most s_r = tol_r / (1 - tol_r), so
    entry by entry |(C Delta)^i| <= M^i with M = |C| diag(s). With n_i the infinity norm
    of M^i, what is left after m terms is at most
    (n_(m+1) + ... + n_(2m+1)) / (1 - n_(m+1)) of max|q|, as every M^i beyond m is some
    M^(m+1+j) (M^(m+1))^k with j <= m (norms are submultiplicative)."""
    if coupling.shape[1] == 0:  # no resistor varies: nothing to sum
        return np.zeros(len(coupling), dtype=int)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        spread = np.where(tol < 1.0, tol / (1.0 - tol), np.inf)
        m = np.abs(coupling) * spread[:, None, :]
        norms = [np.ones(len(m))]
        power = np.broadcast_to(np.eye(m.shape[1]), m.shape)
        for _ in range(2 * _MOST_KNOWN_TERMS + 1):
            power = power @ m
            norms.append(power.sum(axis=2).max(axis=1))
        n = np.nan_to_num(np.stack(norms, axis=1), nan=np.inf)  # (G, 2K + 2)
        terms = np.full(len(m), -1)
        for count in range(_MOST_KNOWN_TERMS, -1, -1):
            head = n[:, count + 1]
            left = n[:, count + 1:2 * count + 2].sum(axis=1) / (1.0 - head)
            terms = np.where((head < 1.0) & (left <= CONVERGED), count, terms)
    return terms


class _UpperTail:
    """The largest ``keep`` values of each row, streamed in chunks; the 99.7th percentile
    of all the values (numpy's 'linear' method) from them."""

    def __init__(self, keep: int, chunk: int) -> None:
        self.keep = keep
        self.capacity = keep + max(chunk, keep)
        self.parts: list[np.ndarray] = []
        self.held = 0
        self.seen = 0

    def add(self, values: np.ndarray) -> None:
        n = values.shape[1]
        if self.held + n > self.capacity:
            held = np.concatenate(self.parts, axis=1)
            drop = self.held - self.keep
            self.parts = [np.partition(held, drop, axis=1)[:, drop:]]
            self.held = self.keep
        self.parts.append(values)
        self.held += n
        self.seen += n

    def shrink(self) -> None:
        """Drop every value the percentile cannot need."""
        if self.held > self.keep:
            held = np.concatenate(self.parts, axis=1) if len(self.parts) > 1 else self.parts[0]
            drop = self.held - self.keep
            self.parts = [np.partition(held, drop, axis=1)[:, drop:]]
            self.held = self.keep

    def percentile(self) -> np.ndarray:
        h = (self.seen - 1) * MC_PERCENTILE / 100.0
        low = math.floor(h)
        top = np.concatenate(self.parts, axis=1) if len(self.parts) > 1 else self.parts[0]
        start = self.held - (self.seen - low)  # position of order statistic `low`
        part = np.partition(top, start, axis=1)
        lower = part[:, start].astype(float)
        if start + 1 >= self.held:
            return lower
        upper = part[:, start + 1:].min(axis=1).astype(float)
        return lower + (h - low) * (upper - lower)
