"""How the orderings derive seeds: one documented place.

Every random choice of an ordering is drawn from ``np.random.default_rng(s)`` with an ``s`` derived
from the user's seed by the functions below, so that the same seed gives the same permutation and
different parts of one run (subproblems, trials, restarts) draw independent streams.

- :func:`node_seed`: subproblem ``index`` of a run (the node number of the separator tree in nested
  dissection, the block number in recursive bisection): ``(seed · 1 000 003 + 7919 · index) mod
  (2³¹ − 1)``.
- :func:`path_index`: the index of a nested-dissection subproblem, from its parent's index and its
  place among the parent's children (the root's is 0): independent of the processing order.
- :func:`trial_seed`: trial ``t`` of a subproblem: :func:`node_seed` of ``seed + 7 t``.
- :func:`restart_seed`: whole restart ``r`` of nested dissection: ``seed + 1009 r``.
- :func:`rule_seed`: a pivot rule written ``"name/k"`` (e.g. ``"degree/1"``) breaks ties of minimum
  degree by the permutation of seed ``k`` (``"name"`` alone: by vertex number, seed 0); this seed is
  part of the rule, not of the run, so a rule orders the same subtree the same way in every run.
"""

from __future__ import annotations

__all__ = ["node_seed", "trial_seed", "restart_seed", "rule_seed", "path_index"]

_MODULUS = 2**31 - 1


def node_seed(seed: int, index: int) -> int:
    """Seed of subproblem ``index`` of a run seeded ``seed``."""
    return int((int(seed) * 1_000_003 + 7919 * int(index)) % _MODULUS)


def trial_seed(seed: int, trial: int, index: int) -> int:
    """Seed of trial ``trial`` on subproblem ``index``."""
    return node_seed(int(seed) + 7 * int(trial), index)


def restart_seed(seed: int, restart: int) -> int:
    """Seed of restart ``restart`` (0 is the run itself)."""
    return int(seed) + 1009 * int(restart)


def rule_seed(rule: str) -> tuple[str, int]:
    """``(name, tie seed)`` of a pivot rule ``"name"`` or ``"name/k"``."""
    name, _, tie = str(rule).partition("/")
    return name, int(tie or 0)


def path_index(parent: int, child: int) -> int:
    """Index of child ``child`` (0, 1, ...) of the subproblem with index ``parent`` (the root's is 0).

    Nested dissection numbers its subproblems by their place in the separator tree, so that a
    subproblem's seed (:func:`trial_seed`) does not depend on the order in which subproblems are
    processed (several threads may order independent subtrees at once). A 64-bit mix of the pair
    (the finalizer of Steele, Lea & Flood, "Fast splittable pseudorandom number generators",
    OOPSLA 2014) reduced modulo 2³¹ − 1.
    """
    mask = (1 << 64) - 1
    z = (int(parent) * 0x9E3779B97F4A7C15 + (int(child) + 1) * 0xBF58476D1CE4E5B9) & mask
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & mask
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & mask
    z ^= z >> 31
    return int(z % _MODULUS)
