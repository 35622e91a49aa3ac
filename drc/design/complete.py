"""The complete fix search of a single-capacitor stage, run in lockstep with others.

Why complete: a fix text that says "no one- or two-part change passes" must
be true. Within the stated ranges (`ranges_text`), every one-part change and
every two-part change is considered, in the stated order of preference, and
the first that passes the full analysis and every stage rule is the answer:

  1. fewest parts changed;
  2. the smallest total change, the sum of |ln(new / old)| over the parts
     changed (a step of one E24 value costs about 0.1, a decade 2.3);
  3. on a tie, the change whose parts come first in the stage's order
     (resistors, then the capacitor, as in the netlist), then the lower values.

How, cheaply: candidates are screened (drc.design.screen) in numpy: the
capacitor is never tried value by value, since every edge time scales with
it (the passing capacitor values of a resistor assignment are an interval,
solved directly); every resistor value of the window is screened for
one-part changes, and pairs of resistors only up to the cost of the best
two-part change already found. The screen is optimistic, so the first
candidate in order that it passes is confirmed by the full analysis
(`analysis.analyse_stages` and the rules); a refuted candidate teaches the
screen its worst vertices and the next one is confirmed. Searches of many
stages run in lockstep: each round of confirmations of a whole board is one
`analyse_stages` batch (`run_lockstep`).

Bounds, as counts (so the answer is the same on every machine): at most
`MAX_CONFIRMATIONS` full analyses per stage; a search that runs out says so.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Generator, Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import StageResult
from drc.analysis.stage_analysis import analyse_stages
from drc.board.stage import ResistorRole, Stage
from drc.caching import memoized
from drc.checks import run_stage_rules
from drc.design.screen import Request, Screen, Verdicts, screen_all
from drc.library import eseries
from drc.units import format_quantity as fq

# Resistors searched: pull and series roles (others are held). Their values come
# from the series within the resistance-range window (a value outside it fails that
# rule), or within RESISTOR_BOUNDS when the window is not set.
SEARCHED_ROLES = (ResistorRole.PULL, ResistorRole.SERIES)
RESISTOR_BOUNDS = (10.0, 10e6)
# Capacitors: the capacitor series (E12 or coarser) within these bounds.
CAPACITOR_BOUNDS = (1e-12, 10e-3)
MAX_CONFIRMATIONS = 12
_FIRST_ROUND, _LATER_ROUNDS = 1, 3  # confirmations proposed per round
_COST_DIGITS = 9  # costs equal to this many decimals are a tie
_LEAF = 16  # a box of pair values this small is screened whole
_GRID = 4  # a larger box is cut into _GRID x _GRID cells, their corners screened together


@dataclass(frozen=True, slots=True)
class Var:
    """One part the search may change: its present value and its candidate values (ascending)."""

    designator: str
    present: float
    candidates: np.ndarray
    unit: str  # "Ω" or "F"


@dataclass(frozen=True, slots=True)
class Move:
    designator: str
    old: float
    new: float
    unit: str


@dataclass(frozen=True, slots=True)
class Found:
    """A search's answer: the changes (empty: none found), the confirmed result, counts."""

    moves: tuple[Move, ...]
    result: StageResult | None
    analyses: int
    screened: int
    exhausted: bool  # gave up at the bound before the order was complete


def resistor_window(limits: Mapping[str, float]) -> tuple[float, float]:
    """The resistor values searched: the resistance-range window, else RESISTOR_BOUNDS."""
    lo = float(limits.get("resistance_min", RESISTOR_BOUNDS[0]))
    hi = float(limits.get("resistance_max", RESISTOR_BOUNDS[1]))
    return max(lo, RESISTOR_BOUNDS[0]), min(hi, RESISTOR_BOUNDS[1])


def ranges_text(series: str, cap_series: str, limits: Mapping[str, float]) -> str:
    """The stated search ranges, as fix texts print them."""
    lo, hi = resistor_window(limits)
    return (f"resistors {series} {fq(lo, 'Ω')}-{fq(hi, 'Ω')}, capacitors {cap_series} "
            f"{fq(CAPACITOR_BOUNDS[0], 'F')}-{fq(CAPACITOR_BOUNDS[1], 'F')}")


def search_vars(stage: Stage, series: str, cap_series: str, limits: Mapping[str, float],
                fixed_parts: Iterable[str] = ()) -> list[Var]:
    """The parts searched, in stage order, with their candidate values."""
    held = set(fixed_parts)
    lo, hi = resistor_window(limits)
    out: list[Var] = []
    if lo <= hi:
        values = _series_values(series, lo, hi)
        for r in stage.circuit.resistors:
            if r.role in SEARCHED_ROLES and r.ohms > 0 and r.designator not in held:
                out.append(Var(r.designator, r.ohms, values, "Ω"))
    caps = _series_values(cap_series, *CAPACITOR_BOUNDS)
    for c in stage.circuit.capacitors:
        if c.farads > 0 and c.designator not in held:
            out.append(Var(c.designator, c.farads, caps, "F"))
    return out


@memoized(64)
def _series_values(series: str, lo: float, hi: float) -> np.ndarray:
    """The series' values in [lo, hi], ascending (shared: do not modify)."""
    values = np.array(eseries.values_between(series, lo, hi))
    values.flags.writeable = False
    return values


def with_values(stage: Stage, values: Mapping[str, float]) -> Stage:
    """`stage` with the named resistors' ohms / capacitors' farads replaced."""
    circuit = stage.circuit
    resistors = tuple(replace(r, ohms=values[r.designator]) if r.designator in values else r
                      for r in circuit.resistors)
    capacitors = tuple(replace(c, farads=values[c.designator]) if c.designator in values else c
                       for c in circuit.capacitors)
    return replace(stage, circuit=replace(circuit, resistors=resistors, capacitors=capacitors))


def _cost(moves: Sequence[Move]) -> float:
    return round(sum(abs(math.log(m.new / m.old)) for m in moves), _COST_DIGITS)


@dataclass
class _Block:
    """Candidate resistor assignments screened together: one or two resistors moved per row.

    var: (n, 2) indices into the searched resistors (-1: none), val: (n, 2) their new values.
    """

    var: np.ndarray
    val: np.ndarray
    X: np.ndarray  # (n, p) nominal rows
    base: np.ndarray  # cost of the resistor moves
    range_ok: np.ndarray  # every searched resistor inside the window afterwards

    @property
    def n(self) -> int:
        return int(self.X.shape[0])


@dataclass(frozen=True)
class _Option:
    key: tuple  # (parts, cost, tie-break)
    moves: tuple[Move, ...]
    block: int
    row: int


@dataclass(frozen=True, slots=True)
class Analyse:
    """A request for full analyses of one stage with these value sets (one batch per round)."""

    stage: Stage
    rx: ReceiverElectrical
    values: tuple[dict[str, float], ...]


# What a search asks the driver for, and gets back.
Ask = Request | Analyse
Steps = Generator[Ask, Any, None]


class CompleteSearch:
    """One stage's search, a coroutine (`run`) that `run_lockstep` drives with many others.

    It yields requests: screens (`screen.Request`, answered with `Screened`) and
    full analyses (`Analyse`, answered with StageResults); every round the
    driver answers all searches' requests in a few batched solves.
    """

    def __init__(self, stage: Stage, rx: ReceiverElectrical, limits: Mapping[str, float],
                 tolerated: frozenset[str], screen: Screen, variables: list[Var],
                 present: StageResult, fired: frozenset[str]) -> None:
        self.stage, self.rx, self.limits, self.tolerated, self.screen = stage, rx, limits, tolerated, screen
        self.present, self.fired = present, fired
        self.window = resistor_window(limits)
        self.rvars = [v for v in variables if v.unit == "Ω"]
        cvars = [v for v in variables if v.unit == "F"]
        self.cvar = cvars[0] if len(cvars) == 1 and len(stage.circuit.capacitors) == 1 else None
        self.order = {v.designator: i for i, v in enumerate(variables)}
        self.r_order = np.array([self.order[v.designator] for v in self.rvars] + [-1])
        self.r_cols = [screen.column[v.designator] for v in self.rvars]
        lo, hi = self.window
        # resistance-range checks a pull resistor on the contact's lead stage only.
        checked = (ResistorRole.PULL, ResistorRole.SERIES) if stage.lead else (ResistorRole.SERIES,)
        searched = [r for r in stage.circuit.resistors if r.role in checked and r.ohms > 0]
        self.forced_names = {r.designator for r in searched if not lo <= r.ohms <= hi}
        names = [v.designator for v in self.rvars]
        self.forced = {names.index(d) for d in self.forced_names if d in names}
        self.blocks: list[_Block] = []
        self.verdicts: list[Verdicts | None] = []
        self.pairs_bound = -math.inf  # pair rows screened up to this cost
        self.corner_rows = 0  # rows screened to rule out boxes of pairs
        self.refuted: set[tuple] = set()
        self.passed: dict[tuple, StageResult] = {}  # confirmed options (by `_refute_key`), their results
        self.analyses = 0
        self.trusted = False  # the screen agreed with the full analysis on the present values
        self.found: Found | None = None
        self._tables: dict[int, tuple[Verdicts | None, np.ndarray]] = {}

    @property
    def done(self) -> bool:
        return self.found is not None

    @property
    def screened(self) -> int:
        return sum(b.n for b in self.blocks) + self.corner_rows

    # ------------------------------------------------------------ the search

    def run(self) -> Steps:
        """The search, as requests to the driver (see the class docstring)."""
        seeded = self.screen.seed(self.present)
        got = yield Request(self.screen, self.screen.rows(1), full=True, all_edges=not seeded)
        if not self.screen.agrees(got.figures, self.present, self.fired):
            return  # not trusted: the caller falls back
        self.trusted = True
        # More resistors outside the window than a two-part change can move, or one held:
        # resistance-range fails whatever the change.
        if len(self.forced_names) > 2 or len(self.forced) < len(self.forced_names):
            self._finish(None, None, exhausted=False)
            return
        yield from self._add_block(self._singles())
        first = True
        while not self.done:
            left = MAX_CONFIRMATIONS - self.analyses
            if left <= 0 and not self.passed:
                self._finish(None, None, exhausted=True)
                return
            take = max(1, min(_FIRST_ROUND if first else _LATER_ROUNDS, left))
            first = False
            options = yield from self._ordered_options(take)
            if not options:
                self._finish(None, None, exhausted=False)
                return
            # A confirmed option is the answer once it comes first: every option before it
            # (a refuted row's next capacitor, pairs up to its cost) is refuted or screened out.
            known = self.passed.get(_refute_key(options[0].moves))
            if known is not None:
                self._finish(options[0].moves, known, exhausted=False)
                return
            if left <= 0:
                self._finish(None, None, exhausted=True)
                return
            proposed = self._proposals(options)
            results = yield Analyse(self.stage, self.rx, tuple({m.designator: m.new for m in o.moves}
                                                               for o in proposed))
            yield from self._receive(proposed, results)

    def _proposals(self, options: list[_Option]) -> list[_Option]:
        """The options to confirm this round: never past a change with more parts (its turn
        comes after all fewer-part ones are refuted), nor past a confirmed one."""
        out: list[_Option] = []
        for o in options:
            if o.key[0] != options[0].key[0] or _refute_key(o.moves) in self.passed:
                break
            out.append(o)
        return out

    def _receive(self, proposed: list[_Option], results: Sequence[StageResult]) -> Steps:
        learned = False
        self.analyses += len(proposed)
        for opt, result in zip(proposed, results, strict=True):
            result = result if result.receiver_electrical else replace(result, receiver_electrical=self.rx)
            fired = {f.rule for f in run_stage_rules(result, self.limits)} - self.tolerated
            if not fired:
                # The answer only if nothing before it is left when the refutations of this
                # round are taken in (`run`); the proposals after it come after it in order.
                self.passed[_refute_key(opt.moves)] = result
                break
            row = self.blocks[opt.block].X[opt.row].copy()
            cap = next((m for m in opt.moves if m.unit == "F"), None)
            if cap is not None:
                row[self.screen.column[cap.designator]] = cap.new
            got = yield Request(self.screen, row[None, :], full=True, all_edges=True)
            learned |= got.learned
            if bool(got.verdicts.passes()[0]):
                # Every vertex of this row is known and the screen still passes it: a
                # rule the screen does not restate fired. Only this option is refuted.
                self.refuted.add(_refute_key(opt.moves))
        if learned:
            live = [b for b in self.blocks if b.n]
            got = yield Request(self.screen, np.vstack([b.X for b in live]))
            parts = iter(_split_verdicts(got.verdicts, [b.n for b in live]))
            self.verdicts = [next(parts) if b.n else None for b in self.blocks]

    def _finish(self, moves: tuple[Move, ...] | None, result: StageResult | None, exhausted: bool) -> None:
        self.found = Found(moves or (), result, self.analyses, self.screened, exhausted)

    # ------------------------------------------------------------ candidate rows

    def _singles(self) -> _Block:
        """The present values, then each resistor alone at each window value."""
        var, val = [np.array([[-1, -1]])], [np.array([[np.nan, np.nan]])]
        for i, v in enumerate(self.rvars):
            if self.forced - {i}:
                continue  # another resistor outside the window stays: fails resistance-range
            x = v.candidates[v.candidates != v.present]
            var.append(np.column_stack([np.full(x.size, i), np.full(x.size, -1)]))
            val.append(np.column_stack([x, np.full(x.size, np.nan)]))
        return self._block(np.vstack(var), np.vstack(val))

    def _pairs(self, bound: float, above: float) -> Generator[Ask, Any, _Block]:
        """Pairs of resistors whose change costs more than `above` and at most `bound`.

        Each pair's plane of values is cut into cells on a grid; a cell where one
        figure fails its limit at all four corners fails everywhere inside (each
        figure being monotonic in each value, as the worst-case corners already
        assume) and is dropped; cells of at most `_LEAF` rows are kept whole.
        """
        planes = [(i, j) for i in range(len(self.rvars)) for j in range(i + 1, len(self.rvars))
                  if not self.forced - {i, j}]
        costs = {pl: self._costs(pl) for pl in planes}
        nearest = {pl: (int(np.argmin(c[0])), int(np.argmin(c[1]))) for pl, c in costs.items()}
        kept = {pl: np.zeros((c[0].size, c[1].size), dtype=bool) for pl, c in costs.items()}
        boxes = {pl: np.array([[0, c[0].size - 1, 0, c[1].size - 1]]) for pl, c in costs.items()}
        while any(b.size for b in boxes.values()):
            big: dict[tuple[int, int], np.ndarray] = {}
            for pl, bx in boxes.items():
                if not bx.size:
                    continue
                (ca, cb), (pa, pb) = costs[pl], nearest[pl]
                # The cheapest value of a range is the one nearest the present value.
                cheapest = ca[np.clip(pa, bx[:, 0], bx[:, 1])] + cb[np.clip(pb, bx[:, 2], bx[:, 3])]
                bx = bx[cheapest <= bound + 1e-9]
                area = (bx[:, 1] - bx[:, 0] + 1) * (bx[:, 3] - bx[:, 2] + 1)
                for a0, a1, b0, b1 in bx[area <= _LEAF]:
                    kept[pl][a0:a1 + 1, b0:b1 + 1] = True
                big[pl] = bx[area > _LEAF]
            boxes = yield from self._split_live(big)
        var: list[np.ndarray] = [np.zeros((0, 2), dtype=int)]
        val: list[np.ndarray] = [np.zeros((0, 2))]
        for (i, j), grid in kept.items():
            ca, cb = costs[(i, j)]
            total = np.round(ca[:, None] + cb[None, :], _COST_DIGITS)
            ia, ib = np.nonzero(grid & (total <= bound) & (total > above) & (ca[:, None] > 0) & (cb[None, :] > 0))
            var.append(np.column_stack([np.full(ia.size, i), np.full(ia.size, j)]))
            val.append(np.column_stack([self.rvars[i].candidates[ia], self.rvars[j].candidates[ib]]))
        return self._block(np.vstack(var), np.vstack(val))

    def _costs(self, plane: tuple[int, int]) -> tuple[np.ndarray, np.ndarray]:
        a, b = self.rvars[plane[0]], self.rvars[plane[1]]
        return np.abs(np.log(a.candidates / a.present)), np.abs(np.log(b.candidates / b.present))

    def _split_live(self, big: dict[tuple[int, int], np.ndarray], grid: int = 0
                    ) -> Generator[Ask, Any, dict[tuple[int, int], np.ndarray]]:
        """Screen a grid of points over every box (one request; `grid` cells a side,
        `_GRID` by default); keep the grid's cells where no figure fails at all four corners."""
        flat = [(pl, box) for pl, bx in big.items() for box in bx]
        if not flat:
            return {}
        g = grid or _GRID
        grids = [(_grid(int(bx[0]), int(bx[1]), g), _grid(int(bx[2]), int(bx[3]), g)) for _pl, bx in flat]
        parts_a, parts_b, cols = [], [], []
        for ((i, j), _bx), (ga, gb) in zip(flat, grids, strict=True):
            parts_a.append(np.repeat(self.rvars[i].candidates[ga], gb.size))
            parts_b.append(np.tile(self.rvars[j].candidates[gb], ga.size))
            cols.append((self.r_cols[i], self.r_cols[j], ga.size * gb.size))
        X = self.screen.rows(sum(c[2] for c in cols))
        at = 0
        for (ci, cj, n), va, vb in zip(cols, parts_a, parts_b, strict=True):
            X[at:at + n, ci], X[at:at + n, cj] = va, vb
            at += n
        self.corner_rows += X.shape[0]
        got = yield Request(self.screen, X, every_figure=True)
        out: dict[tuple[int, int], list[np.ndarray]] = {}
        at = 0
        for (pl, _bx), (ga, gb) in zip(flat, grids, strict=True):
            n = ga.size * gb.size
            F = got.verdicts.fails[at:at + n].reshape(ga.size, gb.size, -1)
            at += n
            dead = (F[:-1, :-1] & F[1:, :-1] & F[:-1, 1:] & F[1:, 1:]).any(axis=2)
            k, m = np.nonzero(~dead)
            out.setdefault(pl, []).append(np.column_stack([ga[k], ga[k + 1], gb[m], gb[m + 1]]))
        return {pl: np.vstack(v) for pl, v in out.items()}

    def _block(self, var: np.ndarray, val: np.ndarray) -> _Block:
        var = var.astype(int)
        n = var.shape[0]
        X = self.screen.rows(n)
        present = np.array([v.present for v in self.rvars] + [1.0])
        base = np.zeros(n)
        lo, hi = self.window
        range_ok = np.ones(n, dtype=bool)
        for k in (0, 1):
            moved = var[:, k] >= 0
            for i, col in enumerate(self.r_cols):
                sel = var[:, k] == i
                X[sel, col] = val[sel, k]
            ratio = np.where(moved, val[:, k] / present[var[:, k]], 1.0)
            base += np.abs(np.log(ratio))
            range_ok &= ~moved | ((val[:, k] >= lo * (1 - 1e-12)) & (val[:, k] <= hi * (1 + 1e-12)))
        for i in self.forced:
            range_ok &= (var[:, 0] == i) | (var[:, 1] == i)
        return _Block(var, val, X, base, range_ok)

    def _add_block(self, block: _Block) -> Steps:
        self.blocks.append(block)
        if block.n:
            got = yield Request(self.screen, block.X)
            self.verdicts.append(got.verdicts)
        else:
            self.verdicts.append(None)

    # ------------------------------------------------------------ options in order

    def _block_options(self, bi: int) -> np.ndarray:
        """(m, 11) options of a block: 8 sort keys (see `_option_rows`), the row, the capacitor,
        the block; remembered until the block's verdicts change."""
        verdict = self.verdicts[bi]
        cached = self._tables.get(bi)
        if cached is not None and cached[0] is verdict:
            return cached[1]
        t = self._block_table(bi)
        table = np.column_stack([t, np.full(t.shape[0], bi)])
        self._tables[bi] = (verdict, table)
        return table

    def _block_table(self, bi: int) -> np.ndarray:
        block, verdict = self.blocks[bi], self.verdicts[bi]
        if verdict is None:
            return np.zeros((0, 10))  # 8 keys, row, capacitor
        usable = block.range_ok & verdict.fixed_ok
        if not usable.any():
            return np.zeros((0, 10))
        nmoves = (block.var >= 0).sum(axis=1)
        lo, hi = verdict.scale_lo, verdict.scale_hi
        plain = usable & (lo <= 1.0) & (1.0 <= hi) & (nmoves >= 1)
        rows = [self._option_rows(bi, np.flatnonzero(plain), np.full(int(plain.sum()), np.nan))]
        c = self.cvar
        if c is not None:
            want = usable & (nmoves <= 1) & (lo <= hi) & ~((lo <= 1.0) & (1.0 <= hi))
            idx = np.flatnonzero(want)
            scale = c.candidates / c.present
            up = lo[idx] > 1.0
            j_up = np.searchsorted(scale, lo[idx])  # smallest candidate >= lo (size: none)
            j_dn = np.searchsorted(scale, hi[idx], side="right") - 1  # largest candidate <= hi (-1: none)
            # Where there is none, the end clipped to lies outside [lo, hi] (the last candidate
            # below lo, the first above hi), so the interval test alone rules it out.
            jj = np.clip(np.where(up, j_up, j_dn), 0, scale.size - 1)
            valid = (scale[jj] >= lo[idx]) & (scale[jj] <= hi[idx])
            rows.append(self._option_rows(bi, idx[valid], c.candidates[jj[valid]]))
            # The present values when the screen passes them: they fail a rule the screen does
            # not restate (slow-edge), so the capacitor alone may still fix the stage. Its first
            # value in order inside the interval is an option (the later ones follow as each is
            # refuted, `_next_capacitor`).
            for i in np.flatnonzero(usable & (nmoves == 0) & (lo <= 1.0) & (1.0 <= hi)):
                inside = np.flatnonzero((scale >= lo[i]) & (scale <= hi[i]) & (c.candidates != c.present))
                if inside.size:
                    dist = np.round(np.abs(np.log(scale[inside])), _COST_DIGITS)
                    j = inside[np.lexsort((c.candidates[inside], dist))[0]]
                    rows.append(self._option_rows(bi, np.array([i]), np.array([float(c.candidates[j])])))
        return np.vstack(rows)

    def _option_rows(self, bi: int, idx: np.ndarray, cap: np.ndarray) -> np.ndarray:
        """Sort keys of options (as `_make_option` orders them), the row and the capacitor.

        Keys: parts, cost, then the moves in stage order as (order, value) pairs.
        """
        block = self.blocks[bi]
        var, val = block.var[idx], block.val[idx]
        has_cap = ~np.isnan(cap)
        nmoves = (var >= 0).sum(axis=1) + has_cap.astype(int)
        cost = block.base[idx].copy()
        if self.cvar is not None:
            cost = cost + np.abs(np.log(np.where(has_cap, cap, self.cvar.present) / self.cvar.present))
        oc = float(self.order[self.cvar.designator]) if self.cvar is not None else np.inf
        pairs = [(np.where(var[:, k] >= 0, self.r_order[var[:, k]], np.inf),
                  np.where(var[:, k] >= 0, val[:, k], np.inf)) for k in (0, 1)]
        pairs.append((np.where(has_cap, oc, np.inf), np.where(has_cap, cap, np.inf)))
        o = np.column_stack([p[0] for p in pairs])
        v = np.column_stack([p[1] for p in pairs])
        # Unused slots (inf) go last; within a row only they are equal, and their values
        # are inf too, so any sort gives the same rows.
        order = np.argsort(o)
        o, v = np.take_along_axis(o, order, axis=1), np.take_along_axis(v, order, axis=1)
        keys = np.column_stack([nmoves, np.round(cost, _COST_DIGITS), o[:, 0], v[:, 0], o[:, 1], v[:, 1],
                                o[:, 2], v[:, 2]])
        return np.column_stack([keys, idx, cap])

    def _options(self, count: int) -> list[_Option]:
        """The first `count` options in order that are not refuted."""
        parts = [self._block_options(bi) for bi in range(len(self.blocks))]
        table = np.vstack(parts) if parts else np.zeros((0, 11))
        order = np.lexsort(tuple(table[:, k] for k in range(7, -1, -1)))
        out: list[_Option] = []
        for r in order:
            # A refuted row's option moves on to its next capacitor, which comes later in the
            # order than the row itself: stop only once `count` options come before this row.
            if len(out) >= count and out[count - 1].key[:2] < (int(table[r, 0]), float(table[r, 1]) - 1e-9):
                break
            bi, i = int(table[r, 10]), int(table[r, 8])
            cap = None if np.isnan(table[r, 9]) else float(table[r, 9])
            opt: _Option | None = self._make_option(bi, i, cap)
            if opt is not None and _refute_key(opt.moves) in self.refuted:
                opt = self._next_capacitor(bi, i)
            if opt is None:
                continue
            bisect.insort(out, opt, key=lambda o: o.key)  # after equal keys, as a stable sort puts it
        return out[:count]

    def _make_option(self, bi: int, i: int, cap: float | None) -> _Option:
        block = self.blocks[bi]
        moves = [Move(self.rvars[int(v)].designator, self.rvars[int(v)].present, float(x), "Ω")
                 for v, x in zip(block.var[i], block.val[i], strict=True) if v >= 0]
        if cap is not None and self.cvar is not None:
            moves.append(Move(self.cvar.designator, self.cvar.present, cap, "F"))
        ordered = tuple(sorted(moves, key=lambda m: self.order[m.designator]))
        tie = tuple((self.order[m.designator], m.new) for m in ordered)
        return _Option((len(ordered), _cost(ordered), tie), ordered, bi, i)

    def _next_capacitor(self, bi: int, i: int) -> _Option | None:
        """A refuted option's row: its next capacitor value in order inside the screened interval."""
        c, verdict, block = self.cvar, self.verdicts[bi], self.blocks[bi]
        if c is None or verdict is None or (block.var[i] >= 0).sum() > 1:
            return None
        lo, hi = float(verdict.scale_lo[i]), float(verdict.scale_hi[i])
        scale = c.candidates / c.present
        inside = np.flatnonzero((scale >= lo) & (scale <= hi) & (c.candidates != c.present))
        dist = np.round(np.abs(np.log(scale[inside])), _COST_DIGITS)
        for j in inside[np.lexsort((c.candidates[inside], dist))]:
            opt = self._make_option(bi, i, float(c.candidates[j]))
            if _refute_key(opt.moves) not in self.refuted:
                return opt
        return None

    def _ordered_options(self, count: int) -> Generator[Ask, Any, list[_Option]]:
        """Options in order, after screening enough pairs that none cheaper is missing."""
        while True:
            options = self._options(count)
            best = options[0] if options else None
            if best is not None and best.key[0] <= 1:
                return options
            bound = math.inf if best is None else best.key[1]
            if self.pairs_bound >= bound or len(self.rvars) < 2:
                return options
            block = yield from self._pairs(bound, self.pairs_bound)
            self.pairs_bound = bound
            yield from self._add_block(block)


_Box = tuple[int, int, int, int]  # candidate index ranges [a0, a1] x [b0, b1] of a plane


def _grid(lo: int, hi: int, cells: int) -> np.ndarray:
    """Up to `cells` + 1 indices from lo to hi, both included (a point twice if lo == hi)."""
    if lo == hi:
        return np.array([lo, lo])
    # Rounded from a rising sequence, so sorted: np.unique's work without its check for
    # masked arrays, which imports numpy.ma (about 10 ms of a small board's check).
    grid = np.round(np.linspace(lo, hi, min(cells, hi - lo) + 1)).astype(int)
    return grid[np.concatenate(([True], grid[1:] != grid[:-1]))]


def _split_verdicts(v: Verdicts, sizes: list[int]) -> list[Verdicts]:
    cuts = np.cumsum(sizes)[:-1]
    return [Verdicts(*parts) for parts in zip(np.split(v.fixed_ok, cuts), np.split(v.scale_lo, cuts),
                                              np.split(v.scale_hi, cuts), np.split(v.fails, cuts), strict=True)]


def _refute_key(moves: tuple[Move, ...]) -> tuple:
    res = tuple(m for m in moves if m.unit == "Ω")
    cap = next((m.new for m in moves if m.unit == "F"), None)
    return (res, cap)


def run_lockstep(searches: Sequence[CompleteSearch]) -> None:
    """Run searches together: each round, every search's screens of one circuit structure
    share their solves (screen.screen_all) and all full analyses are one batch."""
    live: dict[int, tuple[CompleteSearch, Steps, Ask]] = {}
    for k, s in enumerate(searches):
        steps = s.run()
        live[k] = (s, steps, next(steps))
    while live:
        keys = list(live)
        screens = {k: ask for k in keys if isinstance(ask := live[k][2], Request)}
        answers: dict[int, Any] = dict(zip(screens, screen_all(list(screens.values())), strict=True))
        asks = [(k, values) for k in keys if isinstance(ask := live[k][2], Analyse) for values in ask.values]
        if asks:
            results = analyse_stages([with_values(live[k][0].stage, v) for k, v in asks],
                                     [live[k][0].rx for k, _ in asks])
            for (k, _), r in zip(asks, results, strict=True):
                answers.setdefault(k, []).append(r)
        for k in keys:
            s, steps, _ = live[k]
            if answers[k] is None:  # the screen cannot answer: this search falls back
                s.trusted, s.found = False, None
                steps.close()
                del live[k]
                continue
            try:
                live[k] = (s, steps, steps.send(answers[k]))
            except StopIteration:
                del live[k]
