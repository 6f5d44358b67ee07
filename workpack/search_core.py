"""Which feeder to open first when a ground shows: the pure core of the search.

A ground shows on a switchboard's detector. Feeders are opened one at a time or in groups
while the detector is watched; when the indication clears, the ground lies downstream of
what was opened, and the search repeats one level down. This module turns a tree of
candidates (priors, costs, vital flags) into a plan: numbered steps with their branches,
the expected cost, and the ratio table behind the order.

The model, stated once:

* Detection is perfect: opening a set clears the indication exactly when the ground lies
  downstream of one of its members. (A vital load transferred to an alternate supply on
  the same insulated system takes a ground in the load itself along with it; where that
  matters the caller shapes the tree or the priors accordingly.)
* A board's *remainder* (its prior minus its children's priors) is the chance that the
  ground is on the board's own bus or incoming cable, or that the indication is false.
  Then nothing clears and the level ends "not found at this level". With no remainder
  (within ``PRIOR_TOLERANCE``) a candidate left alone after all others are ruled out is
  inferred, not opened.
* Every observation opens its set, watches the detector and restores. It costs the
  board's ``observe_cost`` once plus, per member, its ``interrupt_cost`` and preparation:
  ``transfer_cost`` for a vital load with an alternate supply (transferred before opening,
  back after) or ``permission_cost`` for a vital load without one (opened only with
  permission, flagged on the step). A set never holds two vital loads.
* Levels are searched one after the other: a level identifies one child before that
  child's own circuits are searched, so costs add over levels, each level weighted by the
  chance that it is reached, and the levels can be optimized one by one.

Methods per level:

* ``blackwell``: one at a time (``max_group_size=1``): decreasing prior/cost is optimal
  (Blackwell's rule; M. C. Chew Jr., "A Sequential Search Procedure", Ann. Math. Statist.
  38(2), 1967; L. D. Stone, Theory of Optimal Search, 1975, section 4.3). Exact at any
  size. With no remainder the candidate best left to inference goes last, unopened.
* ``exact``: group tests, dynamic programming over the subsets of candidates still in
  doubt (about 3**n work: at most ``exact_limit`` candidates, and within the plan-wide
  ``exact_work_limit``, granted to the levels most likely to be searched first).
* ``heuristic``: group tests beyond that. Candidates are put in a few orders (Blackwell's
  and variants); in each order, a dynamic program picks contiguous groups for the
  "does not clear" chain and splits each group by prefix or suffix; the cheapest order
  wins and small groups are then re-solved exactly. Its gap to ``lower_bound`` is
  reported. The bound (see ``_lower_bound``) adds the least possible interruption cost
  (Blackwell's rule on the interruption costs alone: a group cannot interrupt a
  candidate before the first test that contains it) to the least possible number of
  observations (a Huffman code length, strengthened by the rule that vital loads sit in
  different tests).

Costs are in one unit of the caller's choosing (minutes, or minutes plus a penalty for
what goes dead); the core only adds and compares them. Probabilities are fractions
(0..1). Nothing here reads or writes files, talks to a network or a database, or knows
the plant model.
"""

from __future__ import annotations

import heapq
import math
from collections import deque
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Literal, TypeAlias

from workpack.errors import WorkpackError, did_you_mean

__all__ = [
    "Branch",
    "Candidate",
    "EXACT_HARD_LIMIT",
    "EXACT_LIMIT",
    "EXACT_WORK_LIMIT",
    "LevelPlan",
    "PRIOR_TOLERANCE",
    "Preparation",
    "RatioRow",
    "SearchInputError",
    "SearchPlan",
    "Step",
    "blackwell_order",
    "check_tree",
    "plan_search",
    "sequence_cost",
]

PRIOR_TOLERANCE = 1e-9
"""Priors are compared with this slack (absolute); a smaller remainder counts as none."""

EXACT_LIMIT = 12
"""Default largest number of candidates on one level searched exactly with group tests."""

EXACT_HARD_LIMIT = 14
"""Largest ``exact_limit`` accepted: the exact search grows as 3**n."""

EXACT_WORK_LIMIT = 2_000_000
"""Default exact-search work for a whole plan, in subset pairs examined (about 0.5 s)."""

_HEURISTIC_WORK = 150_000  # split evaluations per candidate order in the heuristic
_POLISH_LIMIT = 8  # heuristic groups up to this size are re-solved exactly
_SHRINK = 1.0 - 1e-12  # a later option must beat the kept one by more than rounding

Preparation: TypeAlias = Literal["", "transfer", "permission"]


class SearchInputError(WorkpackError):
    """The candidate tree or a search option is unusable; lists every problem found."""

    def __init__(self, problems: Iterable[str]):
        self.problems = tuple(problems)
        super().__init__("\n".join(self.problems))

    def format_message(self) -> str:
        return "\n".join(self.problems)


@dataclass(frozen=True)
class Candidate:
    """A place the ground may be: a feeder, branch circuit, or (at the root) a board.

    ``prior`` is the probability that the ground lies downstream of this candidate (the
    root normally 1.0); the children's priors plus the remainder add up to it. Costs are
    per observation that opens the candidate. ``observe_cost`` belongs to the candidate
    as a board: one observation when its children are searched (watch the detector,
    restore what was opened).
    """

    id: str
    prior: float
    interrupt_cost: float = 0.0
    vital: bool = False
    has_alternate: bool = False
    transfer_cost: float = 0.0
    permission_cost: float = 0.0
    observe_cost: float = 0.0
    children: tuple[Candidate, ...] = ()

    @property
    def preparation(self) -> Preparation:
        """What must happen before opening it: a transfer, a permission, or nothing."""
        if not self.vital:
            return ""
        return "transfer" if self.has_alternate else "permission"

    @property
    def opening_cost(self) -> float:
        """What opening it adds to any observation: interruption plus preparation."""
        prep = self.preparation
        if prep == "transfer":
            return self.interrupt_cost + self.transfer_cost
        if prep == "permission":
            return self.interrupt_cost + self.permission_cost
        return self.interrupt_cost


@dataclass(frozen=True)
class Branch:
    """Where an observation leads.

    ``step``: go to step ``step`` of the same level. ``found``: the ground is downstream
    of ``candidate_id``; search its level next (``SearchPlan.level``) or, if it has no
    listed circuits, locate the fault by insulation-resistance tests. ``not_found``: the
    ground is on this board's own bus or incoming cable, or the indication is false.
    """

    kind: Literal["step", "found", "not_found"]
    step: int = 0
    candidate_id: str = ""


@dataclass(frozen=True)
class Step:
    """One observation: open, watch the detector, restore.

    Before opening, transfer ``transfer_id`` to its alternate supply, or obtain the
    permission flagged in ``permission_id``. Afterwards reclose everything opened (and
    transfer back), whatever the detector showed, then follow the branch.
    """

    number: int
    open_ids: tuple[str, ...]
    transfer_id: str | None
    permission_id: str | None
    dead_ids: tuple[str, ...]  # without supply while open: opened ones and all downstream
    cost: float
    probability: float  # chance the step is carried out, given this level is searched
    if_clears: Branch
    if_not_clear: Branch


@dataclass(frozen=True)
class RatioRow:
    """One line of the reasoning table: a candidate tested on its own."""

    candidate_id: str
    prior: float  # given the ground is downstream of the board
    test_cost: float  # opening it alone: interruption, preparation, one observation
    ratio: float  # prior / test_cost
    rank: int  # 1 = first in Blackwell's order
    vital: bool
    has_alternate: bool
    preparation: Preparation


@dataclass(frozen=True)
class LevelPlan:
    """The search among one board's children."""

    board_id: str
    method: Literal["blackwell", "exact", "heuristic"]
    reach_probability: float  # chance this level is searched, given the root's ground
    remainder: float  # given this level: own bus or cable, or a false indication
    start: Branch  # normally step 1; "found" when nothing needs opening
    steps: tuple[Step, ...]
    table: tuple[RatioRow, ...]  # in Blackwell's order
    expected_cost: float  # this level only, given it is searched
    lower_bound: float  # equals expected_cost unless method is "heuristic"


@dataclass(frozen=True)
class SearchPlan:
    """Every level's plan, root first, then depth first with children by id."""

    levels: tuple[LevelPlan, ...]
    expected_cost: float  # all levels, each weighted by its reach probability
    lower_bound: float  # no strategy of this model can expect less

    @property
    def gap(self) -> float:
        """(expected_cost - lower_bound) / lower_bound; 0.0 when every level is exact."""
        if self.expected_cost <= self.lower_bound:
            return 0.0
        if self.lower_bound <= 0.0:
            return math.inf
        return (self.expected_cost - self.lower_bound) / self.lower_bound

    def level(self, board_id: str) -> LevelPlan:
        """The plan for searching ``board_id``'s children."""
        for lv in self.levels:
            if lv.board_id == board_id:
                return lv
        known = [lv.board_id for lv in self.levels]
        raise KeyError(f"no level plan for board {board_id!r}{did_you_mean(board_id, known)}")


# --------------------------------------------------------------------------- validation


def _walk(root: Candidate) -> list[Candidate]:
    """Every candidate of the tree, depth first, children by id (no recursion)."""
    out: list[Candidate] = []
    stack = [root]
    while stack:
        node = stack.pop()
        out.append(node)
        stack.extend(sorted(node.children, key=lambda c: c.id, reverse=True))
    return out


def _number_problem(owner: str, name: str, value: object, upper: float | None) -> str | None:
    if isinstance(value, bool) or not isinstance(value, int | float):
        return f"candidate {owner!r}: {name!r} must be a number (got {value!r})"
    if not math.isfinite(value) or value < 0.0:
        return f"candidate {owner!r}: {name!r} must be a finite number >= 0 (got {value!r})"
    if upper is not None and value > upper + PRIOR_TOLERANCE:
        return f"candidate {owner!r}: {name!r} must be at most {upper:g} (got {value!r})"
    return None


def check_tree(root: Candidate, nodes: Sequence[Candidate] | None = None) -> None:
    """Raise ``SearchInputError`` listing every problem of the tree; return if none.
    ``nodes``: the tree's ``_walk``, when the caller has it already."""
    problems: list[str] = []
    seen: dict[str, int] = {}
    nodes = _walk(root) if nodes is None else nodes
    for node in nodes:
        if not isinstance(node.id, str) or not node.id:
            problems.append(f"candidate id must be a non-empty string (got {node.id!r})")
        else:
            seen[node.id] = seen.get(node.id, 0) + 1
        for name, upper in (
            ("prior", 1.0),
            ("interrupt_cost", None),
            ("transfer_cost", None),
            ("permission_cost", None),
            ("observe_cost", None),
        ):
            msg = _number_problem(str(node.id), name, getattr(node, name), upper)
            if msg:
                problems.append(msg)
    for cid, count in sorted(seen.items()):
        if count > 1:
            problems.append(f"candidate id {cid!r} appears {count} times: ids must be unique")
    if problems:  # the sums below need sound numbers
        raise SearchInputError(problems)
    for node in nodes:
        if not node.children:
            continue
        total = math.fsum(c.prior for c in node.children)
        if total > node.prior + PRIOR_TOLERANCE:
            problems.append(
                f"candidate {node.id!r}: its children's priors add up to {total:.6g}, more than"
                f" its own prior {node.prior:.6g}: lower the children's or raise the board's"
            )
        for child in sorted(node.children, key=lambda c: c.id):
            if child.opening_cost + node.observe_cost <= 0.0:
                problems.append(
                    f"candidate {child.id!r}: testing it would cost nothing (its interrupt"
                    f" and {child.preparation or 'preparation'} costs and the observe_cost of"
                    f" {node.id!r} are all 0): give one of them a positive value"
                )
    if problems:
        raise SearchInputError(problems)


# --------------------------------------------------------------------- Blackwell's rule


def _ratio(p: float, c: float) -> float:
    if c > 0.0:
        return p / c
    return math.inf if p > 0.0 else 0.0


def blackwell_order(
    ids: Sequence[str], priors: Sequence[float], costs: Sequence[float]
) -> tuple[int, ...]:
    """Indices in decreasing prior/cost (Blackwell's rule), ties by id; zero cost first."""
    return tuple(sorted(range(len(ids)), key=lambda i: (-_ratio(priors[i], costs[i]), ids[i])))


def sequence_cost(
    priors: Sequence[float], costs: Sequence[float], order: Sequence[int]
) -> float:
    """Expected cost of inspecting in ``order``: sum_j p_order[j] * sum_{l<=j} c_order[l]."""
    spent = 0.0
    total = 0.0
    for i in order:
        spent += costs[i]
        total += priors[i] * spent
    return total


def _singles(
    q: Sequence[float], c: Sequence[float], closed: bool
) -> tuple[list[int], int | None, float]:
    """Best one-at-a-time search: (tested order, inferred last or None, cost w/o remainder).

    Open: Blackwell's order, every candidate tested. Closed: the last candidate is never
    opened; for each choice of it the rest go in Blackwell's order, and the cheapest
    choice wins (ties keep Blackwell's own last).
    """
    n = len(q)
    order = sorted(range(n), key=lambda i: (-_ratio(q[i], c[i]), i))
    if not closed or n == 0:
        return order, None, sequence_cost(q, c, order)
    spent = 0.0
    base = 0.0
    prefix = []
    for i in order:
        spent += c[i]
        prefix.append(spent)
        base += q[i] * spent
    total_c = spent
    after = 0.0  # prior mass after position pos
    best = math.inf
    best_pos = n - 1
    for pos in range(n - 1, -1, -1):
        k = order[pos]
        value = base - q[k] * prefix[pos] - c[k] * after + q[k] * (total_c - c[k])
        if value < best * _SHRINK:
            best, best_pos = value, pos
        after += q[k]
    inferred = order[best_pos]
    tested = order[:best_pos] + order[best_pos + 1 :]
    spent = 0.0
    cost = 0.0
    for i in tested:
        spent += c[i]
        cost += q[i] * spent
    return tested, inferred, cost + q[inferred] * spent


# ------------------------------------------------------------------------ level model


@dataclass(frozen=True)
class _Test:
    """A decision-tree node: open ``group`` (item indices, ascending)."""

    group: tuple[int, ...]
    clears: _Tree
    not_clear: _Tree


_Tree: TypeAlias = "_Test | int | None"  # int: found that item; None: not found


@dataclass(frozen=True)
class _Level:
    board: Candidate
    items: tuple[Candidate, ...]  # the board's children, by id
    q: tuple[float, ...]  # priors given the level is searched
    rem: float  # remainder given the level; exactly 0.0 when closed
    u: tuple[float, ...]  # opening cost of each item
    vital: tuple[bool, ...]
    obs: float
    reach: float  # chance the level is searched, given the root's ground

    @property
    def n(self) -> int:
        return len(self.items)

    @property
    def closed(self) -> bool:
        return self.rem == 0.0

    def test_cost(self, group: Iterable[int]) -> float:
        return self.obs + math.fsum(self.u[i] for i in group)


def _make_level(board: Candidate, root_prior: float) -> _Level:
    items = tuple(sorted(board.children, key=lambda c: c.id))
    rem_abs = board.prior - math.fsum(c.prior for c in items)
    if rem_abs <= PRIOR_TOLERANCE:
        rem_abs = 0.0
    scale = 1.0 / board.prior if board.prior > 0.0 else 0.0
    return _Level(
        board=board,
        items=items,
        q=tuple(c.prior * scale for c in items),
        rem=rem_abs * scale,
        u=tuple(c.opening_cost for c in items),
        vital=tuple(c.vital for c in items),
        obs=board.observe_cost,
        reach=board.prior / root_prior if root_prior > 0.0 else 0.0,
    )


def _chain(groups: Sequence[tuple[tuple[int, ...], _Tree]], tail: _Tree) -> _Tree:
    """Fold a "does not clear" chain of (group, sub-tree if it clears) into a tree."""
    tree = tail
    for group, inner in reversed(groups):
        tree = _Test(tuple(sorted(group)), inner, tree)
    return tree


def _solve_singles(lv: _Level) -> _Tree:
    c = [lv.obs + u for u in lv.u]
    tested, inferred, _ = _singles(lv.q, c, lv.closed)
    return _chain([((i,), i) for i in tested], inferred)


# ----------------------------------------------------------------------- exact search


def _exact_work(n: int, closed: bool) -> int:
    """Subset pairs the exact search examines for n candidates."""
    return 3**n // 2 + (0 if closed else 3**n)


def _solve_exact(
    lv: _Level, members: Sequence[int], closed: bool, max_group: int
) -> tuple[float, _Tree]:
    """Optimal decision tree over ``members`` by dynamic programming on subsets.

    State: the set U still in doubt, and whether the ground is known to be in U (closed:
    some earlier test containing U cleared, or the level has no remainder) or may also be
    the remainder (open). A test S (a subset of U with at most one vital load and at most
    ``max_group`` members) costs mass(U) * cost(S); if it clears the search continues in
    S, closed; if not, in U - S, as before. Closed with one candidate left: found. Open
    with none left: not found. Values are mass-weighted, given the level.
    """
    n = len(members)
    q = [lv.q[i] for i in members]
    u = [lv.u[i] for i in members]
    vit = [lv.vital[i] for i in members]
    size = 1 << n
    mass = [0.0] * size
    cost = [lv.obs] * size
    ok = [False] * size
    count = [0] * size
    vitals = [0] * size
    for m in range(1, size):
        low = m & -m
        i = low.bit_length() - 1
        prev = m ^ low
        mass[m] = mass[prev] + q[i]
        cost[m] = cost[prev] + u[i]
        count[m] = count[prev] + 1
        vitals[m] = vitals[prev] + vit[i]
        ok[m] = vitals[m] <= 1 and count[m] <= max_group

    vc = [0.0] * size  # closed values
    bc = [0] * size  # closed: the set to test
    vo = [0.0] * size  # open values
    bo = [0] * size
    inf = math.inf
    shrink = _SHRINK
    rem = lv.rem
    for whole in range(1, size):
        if whole & (whole - 1):
            # Closed: S and its complement split alike, so visit each pair once (S holds
            # the lowest member) and test whichever side is cheaper and allowed.
            low = whole & -whole
            rest = whole ^ low
            m_whole = mass[whole]
            best = inf
            pick = 0
            t = 0
            while t != rest:
                s = low | t
                other = whole ^ s
                if ok[s]:
                    c = cost[s]
                    tested = s
                    if ok[other] and cost[other] < c:
                        c = cost[other]
                        tested = other
                elif ok[other]:
                    c = cost[other]
                    tested = other
                else:
                    t = (t - rest) & rest
                    continue
                v = m_whole * c + vc[s] + vc[other]
                if v < best * shrink:
                    best = v
                    pick = tested
                t = (t - rest) & rest  # next submask, ascending
            vc[whole] = best
            bc[whole] = pick
        if not closed:
            m_open = mass[whole] + rem
            best = inf
            pick = 0
            s = whole & -whole
            while True:
                if ok[s]:
                    v = m_open * cost[s] + vc[s] + vo[whole ^ s]
                    if v < best * shrink:
                        best = v
                        pick = s
                if s == whole:
                    break
                s = (s - whole) & whole
            vo[whole] = best
            bo[whole] = pick

    def items_of(mask: int) -> tuple[int, ...]:
        return tuple(members[j] for j in range(n) if mask >> j & 1)

    def closed_tree(mask: int) -> _Tree:
        if mask & (mask - 1) == 0:
            return members[mask.bit_length() - 1]
        s = bc[mask]
        return _Test(items_of(s), closed_tree(s), closed_tree(mask ^ s))

    full = size - 1
    if closed:
        return vc[full], closed_tree(full)
    links: list[tuple[tuple[int, ...], _Tree]] = []
    mask = full
    while mask:
        s = bo[mask]
        links.append((items_of(s), closed_tree(s)))
        mask ^= s
    return vo[full], _chain(links, None)


# ------------------------------------------------------------------------- heuristic


@dataclass
class _Ordered:
    """The heuristic's solution within one fixed order of the candidates."""

    order: list[int]
    value: float
    chain: list[tuple[int, int]]  # (first, last) positions of each chain group
    inner_value: list[float]
    pick: list[list[int]]  # per interval: 2 * split offset + (1 if the suffix is opened)

    def interval_tree(self, a: int, b: int) -> _Tree:
        if a == b:
            return self.order[a]
        code = self.pick[a][b - a]
        k = a + code // 2
        first, second = ((a, k), (k + 1, b)) if code % 2 == 0 else ((k + 1, b), (a, k))
        group = tuple(sorted(self.order[x] for x in range(first[0], first[1] + 1)))
        return _Test(group, self.interval_tree(*first), self.interval_tree(*second))


def _solve_ordered(lv: _Level, order: list[int], max_group: int) -> _Ordered:
    """Best plan whose tests are contiguous runs of ``order``.

    The "does not clear" chain tests runs from the front; a run that clears is split in
    two (the prefix or the suffix is opened, whichever is cheaper) until one candidate
    is left. Runs are at most ``longest`` long so that the work stays near
    _HEURISTIC_WORK split evaluations; within those limits the result is optimal.
    """
    n = len(order)
    q = [lv.q[i] for i in order]
    u = [lv.u[i] for i in order]
    mass = [0.0] * (n + 1)
    spent = [0.0] * (n + 1)
    vit = [0] * (n + 1)
    for x in range(n):
        mass[x + 1] = mass[x] + q[x]
        spent[x + 1] = spent[x] + u[x]
        vit[x + 1] = vit[x] + lv.vital[order[x]]
    longest = max(2, math.isqrt(2 * _HEURISTIC_WORK // max(n, 1)))
    longest = min(longest, n, max_group)
    span = [1] * n  # the longest allowed run starting at each position
    for a in range(n):
        length = 1
        while length < longest and a + length < n and vit[a + length + 1] - vit[a] <= 1:
            length += 1
        span[a] = length

    obs = lv.obs
    inf = math.inf
    shrink = _SHRINK
    value = [[0.0] * span[a] for a in range(n)]
    pick = [[0] * span[a] for a in range(n)]
    for length in range(2, longest + 1):
        for a in range(n - length + 1):
            if span[a] < length:
                continue
            b = a + length - 1
            m = mass[b + 1] - mass[a]
            row = value[a]
            lo = spent[a]
            hi = spent[b + 1]
            best = inf
            code = 0
            for k in range(a, b):
                mid = spent[k + 1]
                pre = mid - lo
                suf = hi - mid
                if pre <= suf:
                    v = m * (obs + pre) + row[k - a] + value[k + 1][b - k - 1]
                    if v < best * shrink:
                        best = v
                        code = 2 * (k - a)
                else:
                    v = m * (obs + suf) + row[k - a] + value[k + 1][b - k - 1]
                    if v < best * shrink:
                        best = v
                        code = 2 * (k - a) + 1
            row[length - 1] = best
            pick[a][length - 1] = code

    last = n - 1 if lv.closed else n  # closed: the final candidate is inferred
    chain_value = [0.0] * (n + 1)
    chain_pick = [1] * (n + 1)
    for a in range(last - 1, -1, -1):
        tail = mass[n] - mass[a] + lv.rem
        best = inf
        for length in range(1, span[a] + 1):
            b = a + length - 1
            if b >= last:
                break
            v = tail * (obs + spent[b + 1] - spent[a]) + value[a][length - 1]
            v += chain_value[b + 1]
            if v < best * shrink:
                best = v
                chain_pick[a] = length
        chain_value[a] = best
    chain: list[tuple[int, int]] = []
    a = 0
    while a < last:
        b = a + chain_pick[a] - 1
        chain.append((a, b))
        a = b + 1
    inner = [value[a][b - a] for a, b in chain]
    return _Ordered(order, chain_value[0] if last > 0 else 0.0, chain, inner, pick)


def _solve_heuristic(lv: _Level, max_group: int) -> _Tree:
    n = lv.n
    c = [lv.obs + u for u in lv.u]
    tested, inferred, _ = _singles(lv.q, c, lv.closed)
    blackwell = tested + ([] if inferred is None else [inferred])
    by_c = sorted(range(n), key=lambda i: (-_ratio(lv.q[i], c[i]), i))
    by_u = sorted(range(n), key=lambda i: (-_ratio(lv.q[i], lv.u[i]), i))
    orders = [
        blackwell,
        by_u,
        # Vital loads last: the non-vital ones then form long runs that group freely.
        sorted(by_c, key=lambda i: lv.vital[i]),
        sorted(by_u, key=lambda i: lv.vital[i]),
    ]
    best: _Ordered | None = None
    tried: list[list[int]] = []
    for order in orders:
        if order in tried:
            continue
        tried.append(order)
        sol = _solve_ordered(lv, order, max_group)
        if best is None or sol.value < best.value * _SHRINK:
            best = sol
    assert best is not None
    links: list[tuple[tuple[int, ...], _Tree]] = []
    for (a, b), inner_value in zip(best.chain, best.inner_value, strict=True):
        group = tuple(best.order[a : b + 1])
        inner = best.interval_tree(a, b)
        if 3 <= len(group) <= _POLISH_LIMIT:
            exact_value, exact_tree = _solve_exact(lv, sorted(group), True, max_group)
            if exact_value < inner_value * _SHRINK:
                inner = exact_tree
        links.append((group, inner))
    tail: _Tree = best.order[-1] if lv.closed else None
    return _chain(links, tail)


# ---------------------------------------------------------------------- lower bound


def _huffman_depth(weights: Iterable[float]) -> float:
    """Least possible sum of weight * depth over binary trees with these leaves."""
    heap = [float(w) for w in weights]
    heapq.heapify(heap)
    total = 0.0
    while len(heap) > 1:
        merged = heapq.heappop(heap) + heapq.heappop(heap)
        total += merged
        heapq.heappush(heap, merged)
    return total


def _observations_bound(lv: _Level, max_group: int) -> float:
    """A lower bound on the expected number of observations at this level.

    Any plan is a binary tree whose leaves are the outcomes, so a Huffman code length
    bounds it. Stronger where vital loads abound: the first test containing a candidate
    lies on the "does not clear" chain from the start (until then nothing cleared), a
    chain test holds at most one vital load, so the vital loads sit at distinct chain
    positions 1, 2, ... (closed: the one left to inference may share the last). The
    other outcomes, taken alone, still need a Huffman code length; with a remainder, its
    path passes every chain test: at least one per vital load and ceil(n / max_group).
    """
    n = lv.n
    outcomes = list(lv.q) + ([] if lv.closed else [lv.rem])
    plain = _huffman_depth(outcomes)
    vit = sorted((lv.q[i] for i in range(n) if lv.vital[i]), reverse=True)
    k = len(vit)
    if lv.closed:
        floor = 1 if n >= 2 else 0
        positions = [max(floor, min(t, k - 1)) for t in range(1, k + 1)]
    else:
        positions = list(range(1, k + 1))
    vital_part = math.fsum(p * t for p, t in zip(vit, positions, strict=True))
    others = [lv.q[i] for i in range(n) if not lv.vital[i]]
    best = max(plain, _huffman_depth(others + outcomes[n:]) + vital_part)
    if not lv.closed:
        chain = max(1, k, -(-n // max_group))
        best = max(best, _huffman_depth(others) + lv.rem * chain + vital_part)
    return best


def _lower_bound(lv: _Level, max_group: int) -> float:
    """No plan at this level can expect less (proof in the two parts' docstrings).

    Interruption part: each candidate is interrupted at least in the first test that
    contains it, reached with the mass of everything not yet ruled out; opening the
    candidates of a group one after another would reach some of them with less. So the
    interruption cost is at least that of the best one-at-a-time order on interruption
    costs alone, which Blackwell's rule gives (closed: the best one left to inference).
    """
    _, _, interruption = _singles(lv.q, lv.u, lv.closed)
    if not lv.closed:
        interruption += lv.rem * math.fsum(lv.u)
    return interruption + lv.obs * _observations_bound(lv, max_group)


# --------------------------------------------------------------------------- the plan


def _subtrees(nodes: Sequence[Candidate]) -> dict[str, tuple[str, ...]]:
    """Each candidate's id and every id below it in ``_walk`` order, built bottom-up
    once per plan (``nodes`` as ``_walk`` gives them: a node before its children)."""
    below: dict[str, tuple[str, ...]] = {}
    for node in reversed(nodes):
        ids = [node.id]
        for child in sorted(node.children, key=lambda c: c.id):
            ids.extend(below[child.id])
        below[node.id] = tuple(ids)
    return below


def _level_plan(
    lv: _Level, tree: _Tree, method: Literal["blackwell", "exact", "heuristic"], bound: float,
    subtrees: Mapping[str, tuple[str, ...]],
) -> LevelPlan:
    numbered: list[tuple[_Test, float]] = []
    number: dict[int, int] = {}  # id() of a node: its step number
    queue: deque[tuple[_Tree, float]] = deque([(tree, math.fsum(lv.q) + lv.rem)])
    while queue:  # each "does not clear" chain gets consecutive numbers
        node, reach = queue.popleft()
        while isinstance(node, _Test):
            numbered.append((node, reach))
            number[id(node)] = len(numbered)
            cleared = math.fsum(lv.q[i] for i in node.group)
            queue.append((node.clears, cleared))
            node, reach = node.not_clear, max(0.0, reach - cleared)

    def branch(node: _Tree) -> Branch:
        if isinstance(node, _Test):
            return Branch("step", step=number[id(node)])
        if node is None:
            return Branch("not_found")
        return Branch("found", candidate_id=lv.items[node].id)

    steps = []
    for node, reach in numbered:
        members = [lv.items[i] for i in node.group]
        transfer = [m.id for m in members if m.preparation == "transfer"]
        permission = [m.id for m in members if m.preparation == "permission"]
        dead: list[str] = []
        for m in members:
            if m.preparation != "transfer":  # a transferred load stays supplied
                dead.extend(subtrees[m.id])
        steps.append(
            Step(
                number=number[id(node)],
                open_ids=tuple(m.id for m in members),
                transfer_id=transfer[0] if transfer else None,
                permission_id=permission[0] if permission else None,
                dead_ids=tuple(dead),
                cost=lv.test_cost(node.group),
                probability=reach,
                if_clears=branch(node.clears),
                if_not_clear=branch(node.not_clear),
            )
        )
    expected = math.fsum(s.probability * s.cost for s in steps)
    c = [lv.obs + u for u in lv.u]
    order = blackwell_order([it.id for it in lv.items], lv.q, c)
    table = tuple(
        RatioRow(
            candidate_id=lv.items[i].id,
            prior=lv.q[i],
            test_cost=c[i],
            ratio=_ratio(lv.q[i], c[i]),
            rank=rank,
            vital=lv.items[i].vital,
            has_alternate=lv.items[i].has_alternate,
            preparation=lv.items[i].preparation,
        )
        for rank, i in enumerate(order, start=1)
    )
    return LevelPlan(
        board_id=lv.board.id,
        method=method,
        reach_probability=lv.reach,
        remainder=lv.rem,
        start=branch(tree),
        steps=tuple(steps),
        table=table,
        expected_cost=expected,
        lower_bound=bound if method == "heuristic" else expected,
    )


def _whole(value: object, least: int) -> bool:
    return isinstance(value, int) and not isinstance(value, bool) and value >= least


def plan_search(
    root: Candidate,
    *,
    max_group_size: int | None = None,
    exact_limit: int = EXACT_LIMIT,
    exact_work_limit: int = EXACT_WORK_LIMIT,
) -> SearchPlan:
    """Plan the search below ``root`` (the board whose detector shows the ground).

    ``max_group_size`` caps how many feeders one observation may open (1: one at a time,
    planned by Blackwell's rule; None: no cap beyond the vital-load rule). A level with
    at most ``exact_limit`` candidates is searched exactly while the plan's exact work
    stays within ``exact_work_limit`` (levels most likely to be searched first); other
    levels use the heuristic. The same input always gives the same plan.
    """
    problems = []
    if max_group_size is not None and not _whole(max_group_size, 1):
        problems.append(
            f"'max_group_size' must be a whole number >= 1 or None (got {max_group_size!r})"
        )
    if not _whole(exact_limit, 0) or exact_limit > EXACT_HARD_LIMIT:
        problems.append(
            f"'exact_limit' must be a whole number from 0 to {EXACT_HARD_LIMIT}"
            f" (got {exact_limit!r})"
        )
    if not _whole(exact_work_limit, 0):
        problems.append(
            f"'exact_work_limit' must be a whole number >= 0 (got {exact_work_limit!r})"
        )
    if problems:
        raise SearchInputError(problems)
    nodes = _walk(root)
    check_tree(root, nodes)
    subtrees = _subtrees(nodes)

    levels = [_make_level(node, root.prior) for node in nodes if node.children]
    singles = max_group_size == 1
    cap = max_group_size or max((lv.n for lv in levels), default=1)
    exact: set[int] = set()
    if not singles:
        budget = exact_work_limit
        by_reach = sorted(range(len(levels)), key=lambda j: (-levels[j].reach, levels[j].board.id))
        for j in by_reach:
            lv = levels[j]
            if lv.n <= exact_limit:
                work = _exact_work(lv.n, lv.closed)
                if work <= budget:
                    budget -= work
                    exact.add(j)

    plans = []
    for j, lv in enumerate(levels):
        if singles:
            plans.append(_level_plan(lv, _solve_singles(lv), "blackwell", 0.0, subtrees))
        elif j in exact:
            _, tree = _solve_exact(lv, range(lv.n), lv.closed, cap)
            plans.append(_level_plan(lv, tree, "exact", 0.0, subtrees))
        else:
            tree = _solve_heuristic(lv, cap)
            plans.append(_level_plan(lv, tree, "heuristic", _lower_bound(lv, cap), subtrees))
    return SearchPlan(
        levels=tuple(plans),
        expected_cost=math.fsum(p.reach_probability * p.expected_cost for p in plans),
        lower_bound=math.fsum(p.reach_probability * p.lower_bound for p in plans),
    )
