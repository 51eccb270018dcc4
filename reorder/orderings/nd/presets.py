"""The effort presets of nested dissection: one table from effort × graph size to settings.

Every ``nd`` setting left at None takes its value from :data:`TABLE`, keyed by the ``effort``
(``fast``, ``normal``, ``best``) and the size class of the whole graph (:func:`size_class`); an
explicit setting overrides the table. Everything a user reads about the presets (docstrings, help
texts) points here; the thresholds are named once, below.

Reading the table: ``normal`` polishes graphs up to :data:`RAMP_START` vertices fully (six trials on
the top subproblems carrying three smoothed candidates, three top eigenvectors, every pivot rule and
multisection in the subtree choice, given up level by level from the smallest subtrees between
:data:`MS_START` and :data:`MS_END`, see :func:`multisection_floor`) and goes over to the cheap ``huge`` settings
gradually between :data:`RAMP_START` and :data:`RAMP_END` vertices (:func:`ramp`: no step in time per
n·log₂n where a preset would switch at once; its ``large`` row is not used); ``fast``
uses the cheaper settings at every size (one trial per subproblem, no smoothing, the subtree choice
up to ``hybrid_max`` and only the ``degree`` rule, no multisection) and, between :data:`LARGE` and
:data:`RAMP_END` vertices, goes over to its ``huge`` row the same way (:func:`ramp_fast`; its
``large`` row is not used either): leaves of 2000 vertices and no subtree choice, the compiled
breadth-first path below 20 000 vertices; ``best`` polishes fully at every size and keeps the least
nnz(L) of three restarts. Above :data:`LARGE` vertices the leaves are ordered in
:data:`LEAF_PARTS` independent parts, in worker threads. Why each value is what it is (with the
measurements) is in DEVELOPERS.md, "Performance notes".
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..records import EFFORTS

__all__ = ["EFFORTS", "MID", "LARGE", "RAMP_START", "HUGE", "RAMP_END", "CLIMB", "LEAF_PARTS", "ALL_RULES", "TABLE", "size_class", "ramp", "ramp_fast",
           "multisection_floor", "MS_START", "MS_END", "eig_directions", "ROOT_EIG_OFF",
           "Resolved", "resolve"]


#: from this many vertices ("mid"): the cheaper settings give the top subproblems 2 trials carrying
#: three coarse candidates each; "normal" stops multisection and narrows the wide subtree nodes
MID = 30_000
#: above this many vertices ("large"): "normal" uses the cheaper settings
LARGE = 100_000
#: ``normal`` starts giving up its polish at this many vertices (:func:`ramp`): from :data:`LARGE`
#: the decline to the ``huge`` row's cost (about 25x in time per n·log₂n) left steps of 1.4-1.6x
#: between grids 1.25x apart in n; from here, over 1.7 more such steps, 1.2-1.45x (measured below)
RAMP_START = 60_000
#: above this many vertices ("huge"): larger leaves, one trial everywhere, the subtree choice does
#: not climb ("best" excepted)
HUGE = 300_000
#: ``normal`` reaches the ``huge`` row at this many vertices, from the ``mid`` row at
#: :data:`RAMP_START` (``fast`` from :data:`LARGE`)
RAMP_END = 800_000
#: the subtree choice climbs up to subtrees of this size while minimum degree keeps winning
CLIMB = 100_000

#: the ``huge`` rows order the leaves in this many independent parts (subtrees of the separator
#: tree, fixed by the tree alone), in worker threads
LEAF_PARTS = 8
#: ``normal`` gives up multisection gradually between these sizes (:func:`multisection_floor`).
#: Multisection is about a third of ``normal``'s time on 3-D grids (29³: 8.6 -> 5.8 s CPU without
#: it), most of it in the many small subtrees; stopping it at once at MID made t/(n·log₂n) fall 1.42x
#: (CPU) / 1.60x (wall) between the 31³ and 34³ grids
MS_START, MS_END = 20_000, 4 * MID
#: ``spectral_min`` that :func:`ramp` heads for at :data:`RAMP_END`, ten times the ``huge`` rows'
#: 20 000 (where the compiled breadth-first path takes over); the commit that set it meant 20 000,
#: but every ramp measurement since (cliffs, quality) was taken with this value. A ramp ending at
#: 2000 left a step of about 2× in time per n·log₂n at RAMP_END
RAMP_SPECTRAL_MIN = 200000

#: the pivot rules of the full subtree choice ("name/k": tie order of seed k, see
#: :mod:`reorder.orderings.seeds`)
ALL_RULES = ("degree", "mean_fill", "fill", "exact", "degree/1")
_D = ("degree",)
#: ``hybrid_max`` / ``hybrid_wide`` value meaning "the whole graph"
WHOLE = -1

_COLUMNS = ("trials", "top_trials", "keep", "top_keep", "smooth", "top_smooth", "spectral_min", "leaf_size",
            "top_eigenvectors", "hybrid_max", "hybrid_wide", "hybrid_scores", "hybrid_climb", "multisection",
            "restarts", "leaf_parts")

# top_eigenvectors: at least this many (0: as many as ``eigenvectors``); leaf parts: the leaves are
# ordered by this many independent halo minimum-degree calls (1: one global call)
#                            trials top   keep top  smooth top   spectral leaf  top  hybrid hybrid  hybrid     climb  multi- restarts leaf
#                                   trials     keep       smooth min      size  eig  max    wide    scores            section         parts
_ROWS = {
    ("fast", "small"):      (1,    6,    1,   1,   0,     0,   2000,    200,  0,   1000,  WHOLE,  _D,        CLIMB, False,  1,       1),
    ("fast", "mid"):        (1,    2,    1,   3,   0,     0,   2000,    200,  0,   1000,  2000,   _D,        CLIMB, False,  1,       1),
    ("fast", "large"):      (1,    2,    1,   3,   0,     0,   2000,    200,  0,   1000,  2000,   _D,        CLIMB, False,  1,       1),
    ("fast", "huge"):       (1,    1,    1,   1,   0,     0,   20000,   2000, 0,   0,     2000,   _D,        0,     False,  1,       LEAF_PARTS),
    ("normal", "small"):    (2,    6,    3,   3,   4,     4,   500,     50,   3,   WHOLE, WHOLE,  ALL_RULES, CLIMB, True,   1,       1),
    ("normal", "mid"):      (2,    6,    3,   3,   4,     4,   500,     50,   3,   WHOLE, 2000,   ALL_RULES, CLIMB, False,  1,       1),
    ("normal", "large"):    (2,    2,    1,   3,   0,     0,   2000,    200,  0,   1000,  2000,   _D,        CLIMB, False,  1,       1),
    ("normal", "huge"):     (1,    1,    1,   1,   0,     0,   20000,   400,  0,   2000,  2000,   _D,        0,     False,  1,       LEAF_PARTS),
    ("best", "small"):      (2,    6,    3,   3,   4,     4,   500,     50,   3,   WHOLE, WHOLE,  ALL_RULES, CLIMB, True,   3,       1),
    ("best", "mid"):        (2,    6,    3,   3,   4,     4,   500,     50,   3,   WHOLE, WHOLE,  ALL_RULES, CLIMB, True,   3,       1),
    ("best", "large"):      (2,    6,    3,   3,   4,     4,   500,     50,   3,   WHOLE, WHOLE,  ALL_RULES, CLIMB, True,   3,       1),
    ("best", "huge"):       (2,    6,    3,   3,   4,     4,   500,     50,   3,   WHOLE, WHOLE,  ALL_RULES, CLIMB, True,   3,       1),
}

#: ``TABLE[effort, size class]`` → ``{setting: value}``
TABLE = {key: dict(zip(_COLUMNS, row, strict=True)) for key, row in _ROWS.items()}


def size_class(n: int) -> str:
    """``"small"`` (below :data:`MID`), ``"mid"`` (up to :data:`LARGE`), ``"large"`` (up to
    :data:`HUGE`) or ``"huge"``."""
    return "small" if n < MID else "mid" if n <= LARGE else "large" if n <= HUGE else "huge"


@dataclass(frozen=True)
class Resolved:
    """Concrete settings of one nested-dissection run on a graph of ``n`` vertices; pairs are
    (other subproblems, top subproblems)."""

    leaf_size: int
    trials: int
    top_trials: int
    keep: tuple
    smooth: tuple
    eigenvectors: tuple
    spectral_min: int
    hybrid_max: int
    hybrid_wide: int
    hybrid_scores: tuple
    hybrid_climb: int
    multisection: bool
    restarts: int
    trials_min: int = 0
    top_fraction: float = 0.1
    smooth_min: int = 0
    hybrid_single: int | None = None
    leaf_parts: int = 1
    eig_min: int = 0
    extra_trial_min: int = 0
    smooth_refine: int = 4
    multisection_min: int = 0
    eig_directions: int = 10


#: the ``normal`` ramp's top eigenvectors reach ever fewer top subproblems from ``f`` =
#: :data:`EIG_FROM` on (those of at least ``_eig_share(f) · n`` vertices; the share rises
#: geometrically to 1.2 at :data:`EIG_OFF`) and none from :data:`ROOT_EIG_OFF` on: the root keeps
#: them longest, while :func:`eig_directions` takes its diagonal directions away one by one
EIG_FROM, EIG_OFF = 0.3, 0.68
#: where the root gives up its third eigenvector (its five smoothed vectors become four), between
#: the 682² and 763² grids. At 0.95, together with the root's smoothing (:data:`SMOOTH_OFF`),
#: 763² → 853² fell 1.52x (end run of the fifth session); here the two steps around it measured
#: 1.45x and 1.47x (least of two runs per size, wall and CPU alike)
ROOT_EIG_OFF = 0.87
#: :func:`eig_directions` starts taking directions away here (the children have given up their
#: third eigenvector at f ≈ 0.51) ...
DIR_FROM = 0.62
#: ... and has taken all but the two face diagonals here
DIR_TO = 0.86


def _top_share(f: float) -> float:
    """Share of the graph above which a subproblem is a top one, at ramp position ``f``: 0.1 → 0.5."""
    return 0.1 ** (1.0 - f) * 0.5 ** f


def _eig_share(f: float) -> float:
    """Least share of the graph a top subproblem needs for the top eigenvectors, at ramp position
    ``f``: the top share ``0.1^(1-f) 0.5^f`` up to :data:`EIG_FROM`, then geometrically up to 1.2
    (past the root) at :data:`EIG_OFF`. Stopping them at once at ``f = 0.63`` made t/(n·log₂n) fall
    1.8x between 546² and 610² grids (measured, one thread: 546² 13.1 s of CPU with them, 10.4 s
    without; the decline of the other settings alone gave 1.3x there), so each level of top
    subproblems (grandchildren, children, root: each about n vertices of work) gives them up at its
    own size."""
    if f >= ROOT_EIG_OFF:
        return 1.2
    if f <= EIG_FROM:
        return _top_share(f)
    t = min((f - EIG_FROM) / (EIG_OFF - EIG_FROM), 1.0)
    return min(_top_share(EIG_FROM) ** (1.0 - t) * 1.2 ** t, 1.0)  # the root keeps them to ROOT_EIG_OFF


def eig_directions(f: float) -> int:
    """How many of the 10 diagonal directions of three eigenvectors the top subproblems still try
    at ramp position ``f``: 10 up to :data:`DIR_FROM`, then one fewer every (DIR_TO − DIR_FROM) / 8,
    down to the 2 face diagonals of the first two eigenvectors at :data:`DIR_TO`; the root keeps
    those and the third eigenvector up to :data:`ROOT_EIG_OFF`.

    Each direction costs a smoothed vector and a split of the whole graph (on the root about
    0.1-0.15 s each at 546²-611²): with all 13 vectors the root was about a quarter of the CPU time
    on a 611² grid, and dropping them all at once (the root's third eigenvector left at f ≈ 0.645)
    made t/(n·log₂n) fall 1.57x (wall) / 1.54x (CPU) between 546² and 611² grids. Measured in one
    session, least of two runs per size, 437²-954²: largest step 1.49x wall / 1.46x CPU with this
    schedule and the root's eigenvector at 0.95 (611² → 683², where the children's second trial
    and a smoothing refinement go too; 1.52x at 763² → 853² in a later run, hence
    :data:`ROOT_EIG_OFF` 0.87: at most 1.47x over 546²-954²); with the directions taken between
    f = 0.52 and 0.80 and the root's eigenvector at 0.80, 1.61x (489² → 546²); between 0.62 and
    0.90, 1.52x CPU (763² → 854²). The separators on 611²-763² grids were the same (nnz(L) and
    operations equal to the schedule before).
    """
    if f <= DIR_FROM:
        return 10
    t = min((f - DIR_FROM) / (DIR_TO - DIR_FROM), 1.0)
    return int(round(10.0 - 8.0 * t))


#: from this ramp position on nothing is smoothed any more (the root, the last subproblem smoothed,
#: with one refined candidate: about a sixth of the time there; stopping at the ramp's end made the
#: last step 1.51x, the one before 1.15x)
SMOOTH_OFF = 0.95


def _smooth_refine(f: float) -> int:
    """How many smoothed separators are refined at ramp position ``f``: 4 up to f = 0.75, then one
    fewer every 0.08 of ``f``, down to 1. Near the ramp's end the root is the only subproblem still
    smoothed, and its four refinements on the whole graph were 30% of the time on a 853² grid (9.5 s
    of CPU, 6.6 s without smoothing), all given up at once at the ramp's end: a step of 1.63x in
    t/(n·log₂n) between 853² and 954² grids (one run)."""
    return 4 if f <= 0.75 else max(1, 3 - int((f - 0.75) / 0.08))


def ramp(n: int) -> dict | None:
    """The ``normal`` settings for ``RAMP_START < n < RAMP_END`` vertices: between the ``mid`` row
    (at :data:`RAMP_START`) and the ``huge`` row (at :data:`RAMP_END`), at ``f = log(n / RAMP_START) /
    log(RAMP_END / RAMP_START)``; None outside that range.

    Sizes and limits go geometrically (leaf size 50 → 400, ``spectral_min`` 500 → 20 000, the subtree
    choice's reach ``hybrid_max`` n → 2000 and ``hybrid_climb``, the all-rules reach
    ``hybrid_wide``, and the reach of the wide nodes' second pivot rule, ``hybrid_single`` n → 50);
    the second trial is kept on the subproblems above ``trials_min`` and the
    smoothed eigenvectors on those above ``smooth_min`` (both rising to n: smoothing costs about
    the same with one step as with four, so fewer steps would not make it cheaper); the top
    subproblems (which get the top settings) are those above ``top_fraction`` of the graph, 0.1 →
    0.5. The discrete settings change gradually or at sizes apart from each other: top trials
    6^(1−f) (the fractional part as one more trial on the top subproblems of at least (1 − part)·n
    vertices, so that a trial leaves the smaller top subproblems first), carried candidates 3 → 2 → 1
    (f = 0.24, 0.40), the third top eigenvector leaves the top subproblems below the root level by level between
    f = 0.3 and 0.65 (:func:`_eig_share`), the root tries ever fewer of the directions it spans
    (:func:`eig_directions`) and gives it up at f = 0.95; with whole trials switching at f ≈ 0.51 and 0.77 and the
    eigenvector at 0.63 the steps were 1.34-1.81x between 488² and 763² grids (CPU, one run), now
    1.35-1.51x. Measured before (one thread, CPU time per n·log₂n, loaded
    machine): with the third eigenvector and a top trial both stopping at f = 1/2 a step of 1.54×
    between 488² and 546² grids; with smoothing stopping at once at f = 7/8, 2.1× between 763² and
    853². So the effort falls by many small steps instead of one (a jump of 8× between 312² and
    349² grids with the table alone).
    """
    if not RAMP_START < n < RAMP_END:
        return None
    f = float(np.log(n / RAMP_START) / np.log(RAMP_END / RAMP_START))
    a, b = TABLE["normal", "mid"], dict(TABLE["normal", "huge"], spectral_min=RAMP_SPECTRAL_MIN)

    def geo(x, y):
        return int(round(x ** (1.0 - f) * y ** f))

    leaf = geo(a["leaf_size"], b["leaf_size"])
    keep = 3 if f < 0.24 else 2 if f < 0.40 else 1
    spectral_min = geo(a["spectral_min"], b["spectral_min"])
    trials = a["top_trials"] ** (1.0 - f) * b["top_trials"] ** f
    whole = int(np.floor(trials))
    # the fractional part as one more trial on the top subproblems of at least (1 - part) · n
    # vertices: as the count falls, the extra trial leaves the smaller top subproblems first
    extra_min = int(np.floor((1.0 - (trials - whole)) * n)) + 1
    return dict(a, top_trials=whole, extra_trial_min=extra_min, keep=keep, top_keep=keep,
                spectral_min=spectral_min, smooth_min=geo(spectral_min, n) if f < SMOOTH_OFF else n + 1,
                hybrid_single=geo(n, a["leaf_size"]),
                leaf_size=leaf, top_eigenvectors=a["top_eigenvectors"] if f < ROOT_EIG_OFF else b["top_eigenvectors"],
                eig_min=int(np.ceil(n * _eig_share(f))), eig_directions=eig_directions(f),
                smooth_refine=_smooth_refine(f),
                hybrid_max=geo(n, b["hybrid_max"]), hybrid_wide=geo(a["hybrid_wide"], a["leaf_size"]),
                hybrid_climb=geo(CLIMB, b["hybrid_max"]), trials_min=geo(leaf, n),
                top_fraction=_top_share(f), leaf_parts=LEAF_PARTS)


def ramp_fast(n: int) -> dict | None:
    """The ``fast`` settings for ``LARGE < n < RAMP_END`` vertices: from the ``mid`` row (at
    :data:`LARGE`) to the ``huge`` row (at :data:`RAMP_END`), at ``f`` as in :func:`ramp`; None
    outside that range.

    Leaf size 200 → 2000 and ``spectral_min`` 2000 → 20 000 go geometrically; the subtree choice's
    reach falls from 5 leaves to one (``hybrid_max`` = leaf size · 5^(1−f): at one leaf the choice
    has nothing left to try) and its climb from :data:`CLIMB` to 2000; the top subproblems (two
    trials each) are those above a tenth of the graph up to f = 1/2, then above ``0.1^(2−2f)``
    (only the root near the end), their carried coarse candidates go 3 → 2 → 1 at f = 1/2 and 3/4
    (the top separators are what 3-D meshes need: narrowing the top from f = 0 cost 4.5% of
    operations on a 60³ grid). A single switch at :data:`HUGE` made t/(n·log₂n) fall 3.4× between
    540² and 560² grids, and the second top trial stopping at once at f = 1/2 1.9× between 488²
    and 546² (measured, one thread).
    """
    if not LARGE < n < RAMP_END:
        return None
    f = float(np.log(n / LARGE) / np.log(RAMP_END / LARGE))
    a, b = TABLE["fast", "mid"], TABLE["fast", "huge"]

    def geo(x, y):
        return int(round(x ** (1.0 - f) * y ** f))

    leaf = geo(a["leaf_size"], b["leaf_size"])
    top_keep = 3 if f < 0.5 else 2 if f < 0.75 else 1
    return dict(a, top_keep=top_keep, leaf_size=leaf, spectral_min=geo(a["spectral_min"], b["spectral_min"]),
                hybrid_max=int(round(leaf * 5.0 ** (1.0 - f))), hybrid_climb=geo(CLIMB, 2000),
                top_fraction=0.1 ** (1.0 - max(0.0, 2.0 * f - 1.0)), leaf_parts=LEAF_PARTS)


def multisection_floor(n: int, leaf_size: int) -> int:
    """Smallest subtree (vertices) that ``normal`` tries multisection on, for ``MS_START < n <
    MS_END`` vertices: ``leaf_size^(1-f) · n^f`` at ``f = log(n / MS_START) / log(MS_END /
    MS_START)``, so that it leaves the tree's levels one by one, bottom first (the small subtrees
    are many and cost most); 0 (every subtree) outside that range."""
    if not MS_START < n < MS_END:
        return 0
    f = float(np.log(n / MS_START) / np.log(MS_END / MS_START))
    return int(round(max(leaf_size, 2) ** (1.0 - f) * n ** f))


def resolve(s, n: int) -> Resolved:
    """Fill the settings ``s`` left at None from :data:`TABLE` (between :data:`RAMP_START` and
    :data:`RAMP_END` vertices for ``normal`` from :func:`ramp`, between :data:`LARGE` and
    :data:`RAMP_END` for ``fast`` from :func:`ramp_fast`) for a graph of ``n`` vertices.

    An explicit ``keep`` or ``smooth`` applies to the top subproblems too.
    """
    row = (ramp(n) if s.effort == "normal" else ramp_fast(n) if s.effort == "fast" else None) or \
        TABLE[s.effort, size_class(n)]

    def pick(name, column=None):
        v = getattr(s, name)
        return row[column or name] if v is None else v

    whole = lambda v: n if v == WHOLE else v  # noqa: E731
    keep = pick("keep")
    smooth = pick("smooth")
    top_keep = row["top_keep"] if s.keep is None else int(s.keep)
    top_smooth = row["top_smooth"] if s.smooth is None else int(s.smooth)
    top_eig = s.top_eigenvectors if s.top_eigenvectors is not None else max(int(s.eigenvectors),
                                                                             row["top_eigenvectors"])
    leaf_size = max(int(pick("leaf_size")), 2)
    multisection = bool(pick("multisection"))
    ms_min = 0
    if s.multisection is None and s.effort == "normal":
        ms_min = multisection_floor(n, leaf_size)
        multisection = multisection or ms_min > 0
    return Resolved(
        leaf_size=leaf_size, trials=int(pick("trials")), top_trials=int(pick("top_trials")),
        keep=(int(keep), int(top_keep)), smooth=(int(smooth), int(top_smooth)),
        eigenvectors=(int(s.eigenvectors), int(top_eig)), spectral_min=int(pick("spectral_min")),
        hybrid_max=int(whole(pick("hybrid_max"))), hybrid_wide=int(whole(pick("hybrid_wide"))),
        hybrid_scores=tuple(pick("hybrid_scores")), hybrid_climb=int(pick("hybrid_climb")),
        multisection=multisection, multisection_min=ms_min, restarts=int(pick("restarts")),
        trials_min=max(int(s.trials_min), int(row.get("trials_min", 0))),
        top_fraction=max(float(s.top_fraction), float(row.get("top_fraction", 0.0))),
        smooth_min=int(row.get("smooth_min", 0)), hybrid_single=row.get("hybrid_single"),
        leaf_parts=int(row.get("leaf_parts", 1)), eig_min=int(row.get("eig_min", 0)),
        extra_trial_min=int(row.get("extra_trial_min", 0)) if s.top_trials is None else 0,
        smooth_refine=int(row.get("smooth_refine", 4)), eig_directions=int(row.get("eig_directions", 10)))
