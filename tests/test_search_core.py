"""The fault-location search core against independent enumerations of every strategy.

Everything the checks compare with is computed here, from the candidates' fields, by code
that shares nothing with workpack.search_core: the cost of an observation, the
remainder, a literal enumeration of every decision tree (up to 5 candidates), a recursive
minimum over every test (up to 9), every permutation for one-at-a-time search, and a
simulation that follows a plan for each possible place of the ground.

Trees, priors and costs are invented by the generators below; no number here is claimed
as a reference value.
"""

from __future__ import annotations

import ast
import itertools
import math
import os
import random
import subprocess
import sys
from collections.abc import Iterator
from functools import cache
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from workpack.search_core import (
    EXACT_HARD_LIMIT,
    PRIOR_TOLERANCE,
    Candidate,
    SearchInputError,
    SearchPlan,
    blackwell_order,
    plan_search,
    sequence_cost,
)

REPO = Path(__file__).resolve().parents[1]


def close(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12)


# ------------------------------------------------------- the model, read independently


def opening_cost(c: Candidate) -> float:
    """What opening c adds to an observation: interruption plus transfer or permission."""
    if c.vital:
        return c.interrupt_cost + (c.transfer_cost if c.has_alternate else c.permission_cost)
    return c.interrupt_cost


def own_mass(node: Candidate) -> float:
    """Chance the ground is at node itself: a leaf's prior, or a board's remainder."""
    if not node.children:
        return node.prior
    rest = node.prior - sum(c.prior for c in node.children)
    return rest if rest > PRIOR_TOLERANCE else 0.0


def nodes_of(root: Candidate) -> list[Candidate]:
    out = [root]
    for c in root.children:
        out.extend(nodes_of(c))
    return out


def boards_of(root: Candidate) -> list[Candidate]:
    return [n for n in nodes_of(root) if n.children]


class Level:
    """One board's children, conditional priors, and the test costs, for the enumerators."""

    def __init__(self, board: Candidate, max_group: int | None):
        self.board = board
        self.by_id = {c.id: c for c in board.children}
        scale = 1.0 / board.prior if board.prior > 0 else 0.0
        self.q = {c.id: c.prior * scale for c in board.children}
        self.rem = own_mass(board) * scale
        self.max_group = max_group or len(board.children)

    def cost(self, group: frozenset[str]) -> float:
        return self.board.observe_cost + sum(opening_cost(self.by_id[i]) for i in group)

    def allowed(self, group: frozenset[str]) -> bool:
        vitals = sum(self.by_id[i].vital for i in group)
        return vitals <= 1 and len(group) <= self.max_group

    def tests(self, rest: frozenset[str], closed: bool) -> Iterator[frozenset[str]]:
        for k in range(1, len(rest) + 1):
            for combo in itertools.combinations(sorted(rest), k):
                group = frozenset(combo)
                if closed and group == rest:
                    continue  # opening everything still in doubt tells nothing
                if self.allowed(group):
                    yield group


def brute_level(board: Candidate, max_group: int | None = None) -> float:
    """Least expected cost over every strategy at one level: recursive minimum.

    A strategy opens a group; "clears" leaves the group in doubt with the ground known
    to be there, "does not clear" leaves the rest as before. It ends when one candidate
    is left and known to hold the ground, or none is left (not found at this level).
    """
    lv = Level(board, max_group)

    @cache
    def best(rest: frozenset[str], closed: bool) -> float:
        if (closed and len(rest) == 1) or (not closed and not rest):
            return 0.0
        mass = sum(lv.q[i] for i in rest) + (0.0 if closed else lv.rem)
        return min(
            mass * lv.cost(g) + best(g, True) + best(rest - g, closed)
            for g in lv.tests(rest, closed)
        )

    return best(frozenset(lv.by_id), lv.rem == 0.0)


def every_strategy(lv: Level, rest: frozenset[str], closed: bool) -> Iterator[tuple]:
    """Every decision tree, literally: ("found", id), ("none",) or ("open", g, yes, no)."""
    if closed and len(rest) == 1:
        yield ("found", next(iter(rest)))
        return
    if not closed and not rest:
        yield ("none",)
        return
    for g in lv.tests(rest, closed):
        for yes in every_strategy(lv, g, True):
            for no in every_strategy(lv, rest - g, closed):
                yield ("open", g, yes, no)


def strategy_cost(lv: Level, tree: tuple) -> float:
    """Expected cost of a literal tree, by following it for every place of the ground."""
    total = 0.0
    places = [(i, lv.q[i]) for i in lv.by_id] + ([(None, lv.rem)] if lv.rem else [])
    for place, p in places:
        node, spent = tree, 0.0
        while node[0] == "open":
            _, g, yes, no = node
            spent += lv.cost(g)
            node = yes if place in g else no
        assert node == (("found", place) if place is not None else ("none",))
        total += p * spent
    return total


def brute_total(root: Candidate, max_group: int | None = None) -> float:
    """Every level's optimum, weighted by the chance that level is searched."""
    return sum(
        (b.prior / root.prior) * brute_level(b, max_group) for b in boards_of(root)
    )


# ---------------------------------------------------------- following a plan, checking


def follow(plan: SearchPlan, root: Candidate) -> float:
    """Expected cost of a plan, found by carrying it out for every place of the ground.

    Checks on the way that the plan ends at the right place every time, that each step's
    cost is what the model says, and that no step is visited twice.
    """
    parent: dict[str, Candidate] = {}
    for node in nodes_of(root):
        for c in node.children:
            parent[c.id] = node
    total = 0.0
    for place in nodes_of(root):
        p = own_mass(place)
        if p <= 0.0:
            continue
        upstream = {place.id}
        walker = place
        while walker.id in parent:
            walker = parent[walker.id]
            upstream.add(walker.id)
        spent = 0.0
        board = root
        while True:
            lp = plan.level(board.id)
            branch = lp.start
            visited: set[int] = set()
            kids = {c.id: c for c in board.children}
            while branch.kind == "step":
                assert branch.step not in visited
                visited.add(branch.step)
                step = lp.steps[branch.step - 1]
                assert step.number == branch.step
                cost = board.observe_cost + sum(opening_cost(kids[i]) for i in step.open_ids)
                assert close(step.cost, cost)
                spent += cost
                clears = any(i in upstream for i in step.open_ids)
                branch = step.if_clears if clears else step.if_not_clear
            if branch.kind == "not_found":
                assert place is board, f"ground at {place.id} reported not found at {board.id}"
                break
            found = kids[branch.candidate_id]
            assert found.id in upstream, f"ground at {place.id} reported below {found.id}"
            if not found.children:
                assert found is place
                break
            board = found
        total += p * spent
    return total / root.prior


def assert_vital_rules(plan: SearchPlan, root: Candidate) -> None:
    """Never two vital loads in one observation; never one without transfer or permission."""
    by_id = {n.id: n for n in nodes_of(root)}
    for lp in plan.levels:
        for step in lp.steps:
            opened = [by_id[i] for i in step.open_ids]
            vitals = [c for c in opened if c.vital]
            assert len(vitals) <= 1, f"step {step.number} of {lp.board_id} opens two vital loads"
            transfer = [c.id for c in vitals if c.has_alternate]
            permission = [c.id for c in vitals if not c.has_alternate]
            assert step.transfer_id == (transfer[0] if transfer else None)
            assert step.permission_id == (permission[0] if permission else None)
            dead = set()
            for c in opened:
                if not (c.vital and c.has_alternate):
                    dead |= {n.id for n in nodes_of(c)}
            assert set(step.dead_ids) == dead
            assert len(step.dead_ids) == len(dead)


# ------------------------------------------------------------------------- generators

half_units = st.integers(0, 20).map(lambda k: k / 2)


@st.composite
def trees(draw: st.DrawFn, min_n: int = 1, max_n: int = 7, levels: int = 2) -> Candidate:
    """A board with 1-2 levels of candidates: integer weights, so ties happen."""

    def board_children(bid: str, prior: float, observe: float, depth: int) -> tuple:
        n = draw(st.integers(min_n, max_n))
        weights = draw(st.lists(st.integers(0, 12), min_size=n, max_size=n))
        rest = draw(st.sampled_from([0, 0, 1, 3, 10]))
        if sum(weights) + rest == 0:
            rest = 1
        total = sum(weights) + rest
        kids = []
        for i, w in enumerate(weights):
            cid = f"{bid}.{i:02d}"
            p = prior * w / total
            interrupt = draw(half_units)
            if interrupt + observe == 0.0:
                interrupt = 1.0
            sub_observe = draw(half_units)
            below: tuple = ()
            if depth < levels and draw(st.integers(0, 2)) == 0:
                below = board_children(cid, p, sub_observe, depth + 1)
            kids.append(
                Candidate(
                    id=cid,
                    prior=p,
                    interrupt_cost=interrupt,
                    vital=draw(st.integers(0, 2)) == 0,
                    has_alternate=draw(st.booleans()),
                    transfer_cost=draw(half_units),
                    permission_cost=draw(half_units),
                    observe_cost=sub_observe,
                    children=below,
                )
            )
        return tuple(draw(st.permutations(kids)))

    root_prior = draw(st.sampled_from([1.0, 1.0, 0.5]))
    observe = draw(half_units)
    return Candidate("R", root_prior, observe_cost=observe,
                     children=board_children("R", root_prior, observe, 1))


def random_level(n: int, seed: int, rest: float = 0.05, vital_share: float = 0.2,
                 observe: float = 1.0) -> Candidate:
    """One board with n feeders, from a seeded generator (used where hypothesis is slow)."""
    rnd = random.Random(seed)
    weights = [rnd.random() ** 2 for _ in range(n)]
    scale = (1.0 - rest) / sum(weights)
    kids = []
    for i, w in enumerate(weights):
        vital = rnd.random() < vital_share
        kids.append(Candidate(
            id=f"F{i:03d}", prior=w * scale, interrupt_cost=rnd.uniform(0.2, 8.0),
            vital=vital, has_alternate=rnd.random() < 0.6,
            transfer_cost=rnd.uniform(2, 10), permission_cost=rnd.uniform(10, 30),
        ))
    return Candidate("MSB", 1.0, observe_cost=observe, children=tuple(kids))


def slow(examples: int) -> settings:
    """Enumerations take longer than hypothesis's default deadline; the count stays low."""
    return settings(max_examples=examples, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


# ------------------------------------------------------- the test enumerator, checked


@slow(40)
@given(trees(max_n=5, levels=1), st.sampled_from([None, 1, 2]))
def test_recursive_enumerator_agrees_with_listing_every_strategy(root, max_group):
    """The recursive minimum used below equals the cheapest of literally every tree."""
    lv = Level(root, max_group)
    listed = min(
        strategy_cost(lv, t)
        for t in every_strategy(lv, frozenset(lv.by_id), lv.rem == 0.0)
    )
    assert close(listed, brute_level(root, max_group))
    assert close(plan_search(root, max_group_size=max_group).expected_cost, listed)


# --------------------------------------------------------- exact plans equal optimum


@slow(60)
@given(trees(), st.sampled_from([None, 2, 3]))
def test_group_plan_cost_equals_brute_force_optimum(root, max_group):
    """On 1-2 levels of at most 7 candidates the plan is optimal and does what it says."""
    plan = plan_search(root, max_group_size=max_group)
    assert all(lp.method == "exact" for lp in plan.levels)
    optimum = brute_total(root, max_group)
    assert close(plan.expected_cost, optimum)
    assert close(follow(plan, root), plan.expected_cost)
    assert close(plan.lower_bound, plan.expected_cost) and plan.gap == 0.0
    for lp in plan.levels:
        steps_sum = math.fsum(s.probability * s.cost for s in lp.steps)
        assert close(lp.expected_cost, steps_sum)


@slow(5)
@given(trees(min_n=9, max_n=9, levels=1))
def test_exact_search_on_nine_candidates_equals_brute_force(root):
    """The subset search still agrees with the enumerator at 9 candidates."""
    plan = plan_search(root)
    assert plan.levels[0].method == "exact"
    assert close(plan.expected_cost, brute_level(root))


# ------------------------------------------------------------------ Blackwell's rule

# Blackwell's rule: inspecting in decreasing p_i / c_i minimizes the expected cost
# sum_j p(j) * sum_{l<=j} c(l). Published: M. C. Chew Jr., "A Sequential Search
# Procedure", Ann. Math. Statist. 38(2), 1967; L. D. Stone, Theory of Optimal Search,
# 1975, section 4.3.


def single_costs(board: Candidate) -> dict[str, float]:
    return {c.id: board.observe_cost + opening_cost(c) for c in board.children}


@slow(80)
@given(trees(levels=1).filter(lambda r: own_mass(r) > 0.0))
def test_one_at_a_time_follows_blackwells_rule_and_beats_every_permutation(root):
    """With a remainder, steps go in decreasing p/c (ties by id) and no order is cheaper."""
    plan = plan_search(root, max_group_size=1)
    lp = plan.levels[0]
    assert lp.method == "blackwell"
    c = single_costs(root)
    p = {k.id: k.prior / root.prior for k in root.children}
    rem = own_mass(root) / root.prior
    expected_order = sorted(c, key=lambda i: (-p[i] / c[i], i))
    assert [s.open_ids for s in lp.steps] == [(i,) for i in expected_order]
    assert lp.steps[-1].if_not_clear.kind == "not_found"

    def order_cost(order: tuple[str, ...]) -> float:
        spent = total = 0.0
        for i in order:
            spent += c[i]
            total += p[i] * spent
        return total + rem * spent  # not found: everything was opened

    best = min(order_cost(perm) for perm in itertools.permutations(c))
    assert close(lp.expected_cost, best)
    assert close(order_cost(tuple(expected_order)), best)
    assert close(follow(plan, root), lp.expected_cost)
    assert [r.candidate_id for r in lp.table] == expected_order


@slow(60)
@given(trees(levels=1).filter(lambda r: own_mass(r) == 0.0))
def test_one_at_a_time_without_remainder_infers_the_last_candidate(root):
    """With no remainder the last candidate is never opened; the plan is still optimal."""
    lp = plan_search(root, max_group_size=1).levels[0]
    c = single_costs(root)
    p = {k.id: k.prior / root.prior for k in root.children}

    def order_cost(order: tuple[str, ...]) -> float:
        spent = total = 0.0
        for i in order[:-1]:
            spent += c[i]
            total += p[i] * spent
        return total + p[order[-1]] * spent

    best = min(order_cost(perm) for perm in itertools.permutations(c))
    assert close(lp.expected_cost, best)
    opened = [s.open_ids[0] for s in lp.steps]
    assert len(opened) == len(c) - 1
    assert opened == sorted(opened, key=lambda i: (-p[i] / c[i], i))  # Blackwell's rule
    assert all(s.if_not_clear.kind != "not_found" for s in lp.steps)


@settings(max_examples=100)
@given(st.lists(st.tuples(st.integers(0, 9), st.integers(1, 9)), min_size=1, max_size=6))
def test_blackwell_order_minimizes_sequence_cost(pairs):
    """blackwell_order gives the least sum_j p(j) * sum_{l<=j} c(l) over all orders."""
    ids = [f"x{i}" for i in range(len(pairs))]
    p = [a / 10 for a, _ in pairs]
    c = [b / 2 for _, b in pairs]
    order = blackwell_order(ids, p, c)
    best = min(sequence_cost(p, c, perm) for perm in itertools.permutations(range(len(p))))
    assert close(sequence_cost(p, c, order), best)
    ratios = [p[i] / c[i] for i in order]
    assert ratios == sorted(ratios, reverse=True)


# ----------------------------------------------------------- heuristic and its bound


@pytest.mark.parametrize("n", [10, 11, 12])
@pytest.mark.parametrize("observe", [0.2, 2.0, 40.0])
def test_lower_bound_never_exceeds_the_exact_optimum(n, observe):
    """On 10-12 candidates: heuristic bound <= exact optimum <= heuristic plan."""
    for seed in range(2):
        root = random_level(n, seed + 10 * n, rest=0.05 * seed, observe=observe)
        exact = plan_search(root)
        assert exact.levels[0].method == "exact"
        heur = plan_search(root, exact_limit=0)
        assert heur.levels[0].method == "heuristic"
        assert heur.lower_bound <= exact.expected_cost * (1 + 1e-9)
        assert exact.expected_cost <= heur.expected_cost * (1 + 1e-9)
        assert close(follow(heur, root), heur.expected_cost)


@slow(40)
@given(trees(max_n=7), st.sampled_from([None, 2]))
def test_lower_bound_holds_on_small_trees_against_brute_force(root, max_group):
    """Forcing the heuristic everywhere: bound <= brute-force optimum <= plan."""
    heur = plan_search(root, max_group_size=max_group, exact_limit=0)
    optimum = brute_total(root, max_group)
    assert heur.lower_bound <= optimum * (1 + 1e-9) + 1e-12
    assert optimum <= heur.expected_cost * (1 + 1e-9) + 1e-12
    assert close(follow(heur, root), heur.expected_cost)
    assert_vital_rules(heur, root)


@st.composite
def wide_levels(draw: st.DrawFn) -> Candidate:
    n = draw(st.integers(20, 60))
    weights = draw(st.lists(st.integers(0, 100), min_size=n, max_size=n))
    rest = draw(st.sampled_from([0, 5, 50]))
    total = sum(weights) + rest or 1
    observe = draw(st.sampled_from([0.0, 0.5, 2.0, 20.0]))
    kids = []
    for i, w in enumerate(weights):
        kids.append(Candidate(
            id=f"F{i:02d}", prior=w / total,
            interrupt_cost=draw(st.integers(1 if observe == 0 else 0, 30)) / 3,
            vital=draw(st.integers(0, 4)) == 0, has_alternate=draw(st.booleans()),
            transfer_cost=draw(st.integers(0, 20)) / 2,
            permission_cost=draw(st.integers(0, 60)) / 2,
        ))
    return Candidate("MSB", 1.0, observe_cost=observe, children=tuple(kids))


@slow(30)
@given(wide_levels(), st.sampled_from([None, None, 4]))
def test_heuristic_on_20_to_60_feeders_stays_within_its_reported_bound(root, max_group):
    """Bound <= plan = bound * (1 + gap), the plan works, and never loses to one at a time."""
    plan = plan_search(root, max_group_size=max_group)
    lp = plan.levels[0]
    assert lp.method == "heuristic"
    cost = follow(plan, root)
    assert close(cost, plan.expected_cost)
    assert plan.lower_bound <= cost * (1 + 1e-9) + 1e-12
    if plan.lower_bound > 0:
        assert close(plan.lower_bound * (1 + plan.gap), max(cost, plan.lower_bound))
    singles = plan_search(root, max_group_size=1)
    assert cost <= singles.expected_cost * (1 + 1e-9) + 1e-12
    assert_vital_rules(plan, root)


def test_exact_search_is_not_attempted_on_500_feeders():
    """Above the size threshold the level switches to the heuristic and reports its gap."""
    root = random_level(500, 5)
    plan = plan_search(root)
    assert plan.levels[0].method == "heuristic"
    assert 0.0 <= plan.gap < 1.0
    assert close(follow(plan, root), plan.expected_cost)


def test_exact_work_goes_to_the_most_likely_level_first():
    """With work for one 12-candidate level only, the likelier panel gets the exact search."""
    a = random_level(12, 1)
    b = random_level(12, 2)
    root = Candidate("MSB", 1.0, observe_cost=1.0, children=(
        Candidate("PA", 0.3, interrupt_cost=2.0, observe_cost=1.0,
                  children=tuple(Candidate(c.id + "a", c.prior * 0.3, c.interrupt_cost)
                                 for c in a.children)),
        Candidate("PB", 0.6, interrupt_cost=2.0, observe_cost=1.0,
                  children=tuple(Candidate(c.id + "b", c.prior * 0.6, c.interrupt_cost)
                                 for c in b.children)),
    ))
    plan = plan_search(root, exact_work_limit=3**12 * 2)
    assert plan.level("PB").method == "exact"
    assert plan.level("PA").method == "heuristic"
    assert plan.level("MSB").method == "exact"  # two candidates cost next to nothing


# --------------------------------------------------------------------- safety rules


@slow(60)
@given(trees(), st.sampled_from([None, 1, 3]), st.sampled_from([12, 0]))
def test_no_plan_opens_two_vital_loads_or_skips_a_transfer(root, max_group, exact_limit):
    """Every method: at most one vital load per step, each with its transfer or permission."""
    plan = plan_search(root, max_group_size=max_group, exact_limit=exact_limit)
    assert_vital_rules(plan, root)


def test_vital_rules_hold_on_a_wide_level_of_mostly_vital_loads():
    """Many vital loads on one board: they never share a step, and each is prepared."""
    root = random_level(80, 3, vital_share=0.7, observe=30.0)
    assert_vital_rules(plan_search(root), root)


def test_a_transferred_vital_board_is_not_listed_dead_but_its_circuits_are_when_not():
    """dead_ids lists everything downstream of an opened feeder unless it was transferred."""
    panel = Candidate("P1", 0.5, interrupt_cost=1.0, children=(
        Candidate("P1.a", 0.2, 1.0), Candidate("P1.b", 0.2, 1.0)))
    steering = Candidate("ST", 0.3, interrupt_cost=1.0, vital=True, has_alternate=True,
                         transfer_cost=4.0)
    fire = Candidate("FP", 0.1, interrupt_cost=1.0, vital=True, permission_cost=20.0)
    root = Candidate("MSB", 1.0, observe_cost=1.0, children=(panel, steering, fire))
    plan = plan_search(root, max_group_size=1)
    steps = {s.open_ids[0]: s for s in plan.level("MSB").steps}
    assert steps["P1"].dead_ids == ("P1", "P1.a", "P1.b")
    assert steps["ST"].dead_ids == () and steps["ST"].transfer_id == "ST"
    assert steps["FP"].dead_ids == ("FP",) and steps["FP"].permission_id == "FP"


# -------------------------------------------------------------------- not found


@slow(40)
@given(trees(), st.sampled_from([None, 1]))
def test_not_found_ends_a_level_exactly_when_it_has_a_remainder(root, max_group):
    """A board with a remainder has one "not found" outcome; without, none."""
    plan = plan_search(root, max_group_size=max_group)
    for board in boards_of(root):
        lp = plan.level(board.id)
        branches = [lp.start] + [b for s in lp.steps for b in (s.if_clears, s.if_not_clear)]
        not_found = [b for b in branches if b.kind == "not_found"]
        assert len(not_found) == (1 if own_mass(board) > 0 else 0)
        assert close(lp.remainder, own_mass(board) / board.prior if board.prior else 0.0)


# ------------------------------------------------------------------- determinism


@slow(30)
@given(trees(), st.randoms(use_true_random=False))
def test_same_tree_in_any_sibling_order_gives_the_same_plan(root, rnd):
    """The plan depends on the candidates, not on the order they were listed in."""

    def shuffled(node: Candidate) -> Candidate:
        kids = [shuffled(c) for c in node.children]
        rnd.shuffle(kids)
        return Candidate(**{**node.__dict__, "children": tuple(kids)})

    assert plan_search(root) == plan_search(shuffled(root)) == plan_search(root)


def test_plan_does_not_depend_on_the_hash_seed():
    """Two interpreters with different hash seeds print the same plan."""
    script = (
        "import random\n"
        "from workpack.search_core import Candidate, plan_search\n"
        "rnd = random.Random(7)\n"
        "def kids(tag, n, prior):\n"
        "    w = [rnd.random() for _ in range(n)]\n"
        "    s = sum(w) * 1.1\n"
        "    return tuple(Candidate(f'{tag}{i}', prior * x / s, rnd.uniform(0.5, 5),\n"
        "        vital=rnd.random() < 0.3, has_alternate=rnd.random() < 0.5,\n"
        "        transfer_cost=2.0, permission_cost=9.0, observe_cost=1.0,\n"
        "        children=kids(tag + str(i) + '.', 14, prior * x / s) if i < 2 and\n"
        "        len(tag) < 3 else ()) for i, x in enumerate(w))\n"
        "root = Candidate('MSB', 1.0, observe_cost=1.5, children=kids('F', 30, 1.0))\n"
        "print(repr(plan_search(root)))\n"
    )
    outputs = []
    for seed in ("0", "12345"):
        env = {**os.environ, "PYTHONHASHSEED": seed, "PYTHONPATH": str(REPO)}
        done = subprocess.run([sys.executable, "-c", script], env=env, capture_output=True,
                              text=True, check=True)
        outputs.append(done.stdout)
    assert outputs[0] == outputs[1] and "heuristic" in outputs[0]


def test_public_names_are_listed_sorted_and_exist():
    """__all__ is the public API: sorted, and every name in it is defined."""
    import workpack.search_core as core

    assert core.__all__ == sorted(core.__all__)
    assert all(hasattr(core, name) for name in core.__all__)


def test_core_reads_no_files_and_knows_no_plant_model():
    """search_core imports only the standard library's pure parts and workpack.errors."""
    source = (REPO / "workpack" / "search_core.py").read_text(encoding="utf-8")
    imported = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            imported |= {a.name for a in node.names}
        elif isinstance(node, ast.ImportFrom):
            imported.add(node.module or "")
    allowed = {"__future__", "collections", "collections.abc", "dataclasses", "heapq",
               "math", "typing", "workpack.errors"}
    assert imported <= allowed, imported - allowed


# ------------------------------------------------------------------------ errors


def test_bad_tree_lists_every_problem_at_once():
    """Negative prior, duplicate id and a free test are all reported in one error."""
    root = Candidate("MSB", 1.0, children=(
        Candidate("F1", -0.1, interrupt_cost=1.0),
        Candidate("F2", 0.2, interrupt_cost=1.0),
        Candidate("F2", 0.2, interrupt_cost=1.0),
    ))
    with pytest.raises(SearchInputError) as caught:
        plan_search(root)
    assert caught.value.problems == (
        "candidate 'F1': 'prior' must be a finite number >= 0 (got -0.1)",
        "candidate id 'F2' appears 2 times: ids must be unique",
    )
    assert caught.value.exit_code == 2


def test_children_heavier_than_their_board_are_refused():
    """Children's priors may not add up to more than the board's own."""
    root = Candidate("MSB", 1.0, observe_cost=1.0, children=(
        Candidate("F1", 0.7), Candidate("F2", 0.5)))
    with pytest.raises(SearchInputError, match="add up to 1.2, more than its own prior 1"):
        plan_search(root)


def test_a_test_that_costs_nothing_is_refused():
    """Zero interruption cost on a board with zero observe cost would make the order moot."""
    root = Candidate("MSB", 1.0, children=(Candidate("F1", 0.5, interrupt_cost=1.0),
                                           Candidate("F2", 0.5)))
    with pytest.raises(SearchInputError) as caught:
        plan_search(root)
    assert caught.value.format_message() == (
        "candidate 'F2': testing it would cost nothing (its interrupt and preparation costs"
        " and the observe_cost of 'MSB' are all 0): give one of them a positive value"
    )


def test_search_options_are_checked():
    """Option values out of range are named with what was expected."""
    root = random_level(3, 1)
    with pytest.raises(SearchInputError) as caught:
        plan_search(root, max_group_size=0, exact_limit=EXACT_HARD_LIMIT + 1)
    assert caught.value.problems == (
        "'max_group_size' must be a whole number >= 1 or None (got 0)",
        f"'exact_limit' must be a whole number from 0 to {EXACT_HARD_LIMIT}"
        f" (got {EXACT_HARD_LIMIT + 1})",
    )


def test_unknown_level_suggests_the_nearest_board():
    """Asking for a board that has no level plan names the close ones."""
    plan = plan_search(random_level(3, 1))
    with pytest.raises(KeyError, match="did you mean 'MSB'"):
        plan.level("MSB1")


def test_one_candidate_without_remainder_is_found_without_opening_anything():
    """A board with a single child and no remainder: nothing to open, cost zero."""
    root = Candidate("MSB", 1.0, observe_cost=1.0, children=(Candidate("F1", 1.0, 2.0),))
    lp = plan_search(root).level("MSB")
    assert lp.steps == () and lp.start.kind == "found" and lp.start.candidate_id == "F1"
    assert lp.expected_cost == 0.0
