"""How the orderings derive seeds: one documented place.

Every random choice of an ordering is drawn from ``np.random.default_rng(s)`` with an ``s`` derived
from the user's seed by the functions below, so that the same seed gives the same permutation and
different parts of one run (subproblems, trials, restarts) draw independent streams.

- :func:`node_seed`: subproblem ``index`` of a run (the node number of the separator tree in nested
  dissection, the block number in recursive bisection): ``(seed · 1 000 003 + 7919 · index) mod
  (2³¹ − 1)``.
- :func:`trial_seed`: trial ``t`` of a subproblem: :func:`node_seed` of ``seed + 7 t``.
- :func:`restart_seed`: whole restart ``r`` of nested dissection: ``seed + 1009 r``.
- :func:`rule_seed`: a pivot rule written ``"name/k"`` (e.g. ``"degree/1"``) breaks ties of minimum
  degree by the permutation of seed ``k`` (``"name"`` alone: by vertex number, seed 0); this seed is
  part of the rule, not of the run, so a rule orders the same subtree the same way in every run.
"""

from __future__ import annotations

__all__ = ["node_seed", "trial_seed", "restart_seed", "rule_seed"]

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
