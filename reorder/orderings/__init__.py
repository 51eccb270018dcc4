"""Registry of orderings: every ordering is a function of one signature with one settings record.

An ordering is registered with the frozen dataclass of its settings (see
:mod:`reorder.orderings.settings`) and implemented as ``impl(graph, settings, seed)`` returning
``(perm, info)``: a 0-based permutation (new position ``k`` holds old vertex ``perm[k]``, i.e. the
reordered matrix is ``A[perm][:, perm]``) and a dict of facts worth reporting. :func:`order` is the
single entry point and the one validation gate: it builds the settings record from the keywords
(unknown or misapplied options raise :class:`~reorder.errors.InputError` with the closest valid
name), splits the graph into connected components (unless the ordering handles them itself), calls
the function, concatenates, checks the result and times it.

A method may be named by a *method spec*, ``NAME`` or ``NAME:OPTION=VALUE:OPTION=VALUE`` (e.g.
``nd:effort=fast:leaf_size=100``), so that ``compare`` can run any method with any settings;
values are read as by ``--set`` on the command line (:func:`parse_method`).

Adding an ordering::

    from dataclasses import dataclass
    from reorder.orderings import register
    from reorder.orderings.settings import setting

    @dataclass(frozen=True)
    class MineSettings:
        depth: int = setting(3, "how deep to look", minimum=1)

    @register("mine", MineSettings, summary="one line for `reorder methods`")
    def mine(graph, s: MineSettings, seed: int):
        ...
        return perm, {"something": 1}

The decorated name (``mine``) becomes a keyword function ``mine(graph, *, seed=0, depth=3)`` that
validates like :func:`order`.
"""

from __future__ import annotations

import functools
import importlib
import time
from dataclasses import asdict, dataclass, field
from typing import TYPE_CHECKING, Callable, NamedTuple

from ..errors import InputError
from . import records
from .settings import NoSettings, build, closest, declared, parse_value

if TYPE_CHECKING:  # imported on use: listing methods and options must not load NumPy, SciPy or kernels
    import numpy as np

    from ..graph import Graph

__all__ = ["DEFAULT_METHOD", "Ordering", "register", "alias", "order", "available", "describe", "get",
           "settings_class", "preset_of", "declared_options", "parse_method", "resolve"]

#: the method used when none is named, by the API and the command line alike
DEFAULT_METHOD = "auto"


@dataclass(frozen=True, eq=False)
class Ordering:
    """The result of an ordering.

    Attributes
    ----------
    perm : ndarray of int64
        New position ``k`` holds old index ``perm[k]``; the reordered matrix is ``A[perm][:, perm]``.
    method : str
        The method (or method spec) that produced it.
    seed : int
    info : dict
        What a user may want to see: eigensolver path, separator sizes, timings.
    seconds : float
        Wall time of the ordering.
    settings : object
        The settings record the method ran with (None for results built by hand).
    """

    perm: np.ndarray
    method: str
    seed: int = 0
    info: dict = field(default_factory=dict)
    seconds: float = 0.0
    settings: object = None

    @property
    def inverse(self) -> np.ndarray:
        """Inverse permutation: ``inverse[old] = new`` (the new position of each old index)."""
        from ..permutation import inverse_permutation

        return inverse_permutation(self.perm)

    @property
    def iperm(self) -> np.ndarray:
        """Deprecated name of :attr:`inverse` (kept for one release)."""
        import warnings

        warnings.warn("Ordering.iperm is deprecated; use Ordering.inverse", DeprecationWarning, stacklevel=2)
        return self.inverse


@dataclass(frozen=True)
class _Entry:
    name: str
    impl: Callable
    settings: type
    summary: str
    split_components: bool
    order: int
    target: str = ""  # an alias: the method it runs
    preset: tuple = ()  # an alias: the settings it fixes, ((name, value), ...)


_REGISTRY: dict[str, _Entry] = {}


class _Builtin(NamedTuple):
    module: str
    rank: int
    summary: str
    settings: str  # name of the record in :mod:`reorder.orderings.records` ("" for none)
    target: str = ""
    preset: tuple = ()


#: The built-in orderings. Listing them and checking their options (``reorder methods``, ``--help``,
#: a ``--method`` or ``--set`` before the matrix is read) reads this table and the light settings
#: records only; the module is imported when the method is first used.
#: ``tests/test_first_use.py`` checks the table against what the modules register.
_BUILTIN: dict[str, _Builtin] = {
    "natural": _Builtin("basic", 0, "the order of the file (identity permutation)", ""),
    "auto": _Builtin("auto", 5, "cost-aware: one minimum-degree rule first, more effort only where it pays", "AutoSettings"),
    "rcm": _Builtin("basic", 10, "reverse Cuthill-McKee (SciPy), the bandwidth baseline", ""),
    "spectral": _Builtin("envelope", 20, "Fiedler-vector envelope ordering refined by Sloan's algorithm",
                         "SpectralSettings"),
    "mindegree": _Builtin("mindegree", 30, "minimum degree (approximate external degrees, quotient graph)",
                          "MinDegreeSettings"),
    "nd": _Builtin("nd", 40, "nested dissection: multilevel spectral vertex separators, minimum-degree leaves",
                   "NdSettings"),
    "nd-fast": _Builtin("nd", 41, "nested dissection with cheaper settings (nd --effort fast), for a single "
                        "factorization", "NdSettings", "nd", (("effort", "fast"),)),
    "rsb": _Builtin("rsb", 45, "recursive spectral bisection into --parts blocks, ordered block by block",
                    "RsbSettings"),
}


def register(name: str, settings: type = NoSettings, *, summary: str = "", split_components: bool = True,
             rank: int = 100):
    """Decorator registering ``impl(graph, settings, seed) -> (perm, info)`` under ``name``.

    Parameters
    ----------
    name : str
        The method name used by ``--method``.
    settings : type
        Frozen dataclass declaring the settings (fields made with
        :func:`reorder.orderings.settings.setting`).
    summary : str
        One line shown by ``reorder methods``.
    split_components : bool
        If True (default), :func:`order` calls the function once per connected component with
        at least three vertices, so it may assume a connected graph. If False, it receives the whole
        graph and handles components itself.
    rank : int
        Listing position (smaller first).

    Returns
    -------
    callable
        A keyword function ``f(graph, *, seed=0, **options)`` (or ``f(graph, settings_record,
        seed=0)``) that validates the options like :func:`order` and calls ``impl``.
    """

    def deco(impl):
        _REGISTRY[name] = _Entry(name, impl, settings, summary or (impl.__doc__ or "").strip().split("\n")[0],
                                 split_components, rank)

        @functools.wraps(impl)
        def call(graph, settings_record=None, *, seed: int = 0, **options):
            s = settings_record if settings_record is not None else build(name, settings, options)
            return impl(graph, s, int(seed))

        call.impl = impl
        call.settings = settings
        return call

    return deco


def alias(name: str, target: str, *, summary: str, rank: int = 100, **preset) -> None:
    """Register ``name`` as ``target`` with some settings fixed (e.g. ``nd-fast`` = ``nd`` with
    ``effort="fast"``): listed by :func:`available`, so ``compare`` and ``demo`` show it."""
    base = _REGISTRY[target]
    build(target, base.settings, preset)  # the preset itself must be valid
    _REGISTRY[name] = _Entry(name, base.impl, base.settings, summary, base.split_components, rank, target,
                             tuple(preset.items()))


def _load_all() -> None:
    # importing the modules registers their orderings
    for module in dict.fromkeys(b.module for b in _BUILTIN.values()):
        importlib.import_module(f"{__name__}.{module}")


def available() -> list[str]:
    """Names of the orderings (built-in, registered, aliases), in listing order; imports nothing."""
    ranks = {name: b.rank for name, b in _BUILTIN.items()}
    ranks.update({e.name: e.order for e in _REGISTRY.values()})
    return sorted(ranks, key=lambda name: (ranks[name], name))


def describe() -> dict[str, str]:
    """``{name: one-line summary}`` of the orderings, in listing order; imports nothing."""
    return {name: (_REGISTRY[name].summary if name in _REGISTRY else _BUILTIN[name].summary) for name in available()}


def _unknown(name: str) -> InputError:
    names = available()
    return InputError(f"unknown method '{name}'{closest(name, names)} (available: {', '.join(names)})")


def _entry(name: str) -> _Entry:
    """The registered entry of ``name``, importing its module on first use."""
    if name not in _REGISTRY and name in _BUILTIN:
        importlib.import_module(f"{__name__}.{_BUILTIN[name].module}")
    if name not in _REGISTRY:
        raise _unknown(name)
    return _REGISTRY[name]


def _declaration(name: str) -> tuple[type, dict, str]:
    """``(settings class, fixed settings, target method)`` of ``name`` without importing its module."""
    if name in _REGISTRY:
        e = _REGISTRY[name]
        return e.settings, dict(e.preset), e.target or name
    if name in _BUILTIN:
        b = _BUILTIN[name]
        cls = getattr(records, b.settings) if b.settings else NoSettings
        return cls, dict(b.preset), b.target or name
    raise _unknown(name)


def get(name: str) -> Callable:
    """The implementation ``impl(graph, settings, seed)`` registered for ``name``."""
    return _entry(name).impl


def settings_class(name: str) -> type:
    """The settings dataclass of method ``name`` (for an alias, its target's)."""
    return _declaration(name)[0]


def preset_of(name: str) -> dict:
    """The settings an alias fixes (empty for a method of its own)."""
    return _declaration(name)[1]


def parse_method(spec: str) -> tuple[str, dict]:
    """``(name, options)`` of a method spec ``NAME[:OPTION=VALUE]...``; InputError if unreadable,
    the method unknown or an option not one of the method's."""
    parts = [p.strip() for p in str(spec).strip().split(":")]
    name = parts[0]
    cls = settings_class(name)
    opts = {}
    for p in parts[1:]:
        key, eq, text = p.partition("=")
        if not eq or not key.strip():
            raise InputError(f"method spec '{spec}': expected OPTION=VALUE after ':', not '{p}'")
        opts[key.strip()] = parse_value(name, cls, key.strip(), text)
    return name, opts


def resolve(method: str, options: dict | None = None):
    """``(method name, settings record)`` for a method (or method spec) and keywords: the
    validation of :func:`order`, without ordering anything (and without loading the numerics)."""
    name, spec_opts = parse_method(method) if ":" in str(method) else (str(method).strip(), {})
    cls, fixed, target = _declaration(name)
    opts = {**spec_opts, **(options or {})}
    for k in opts:
        if k in fixed:
            raise InputError(f"{name} is {target} with {k}={fixed[k]}; use {target} to choose {k}")
    return name, build(name, cls, {**opts, **fixed})


def _unpack(result):
    import numpy as np

    if isinstance(result, tuple):
        perm, info = result
    elif isinstance(result, Ordering):
        perm, info = result.perm, dict(result.info)
    else:
        perm, info = result, {}
    return np.asarray(perm, dtype=np.int64), dict(info or {})


def _as_graph(matrix_or_graph, settings) -> Graph:
    from ..graph import Graph, from_matrix

    if isinstance(matrix_or_graph, Graph):
        return matrix_or_graph
    import scipy.sparse as sp

    if not sp.issparse(matrix_or_graph):
        raise InputError(f"order() takes a Graph or a SciPy sparse matrix or array, not {type(matrix_or_graph).__name__}")
    if matrix_or_graph.ndim != 2 or matrix_or_graph.shape[0] != matrix_or_graph.shape[1]:
        raise InputError(f"matrix is not square {matrix_or_graph.shape}")
    weights = getattr(settings, "weights", "pattern")
    return from_matrix(matrix_or_graph, weights=weights if weights in ("pattern", "values") else "pattern")


def order(graph, method: str = DEFAULT_METHOD, *, seed: int = 0, **options) -> Ordering:
    """Order a graph or matrix with the registered ``method``.

    Components are ordered one after another in the order of their smallest vertex; isolated
    vertices keep their relative order. The result is checked to be a permutation.

    Parameters
    ----------
    graph : Graph or SciPy sparse matrix / sparse array
        A matrix is turned into the graph of the pattern of ``A + Aᵀ`` (edge weights from the
        values where the method's ``weights`` setting asks for them).
    method : str
        A name from :func:`available`, or a method spec ``NAME:OPTION=VALUE...``; default
        :data:`DEFAULT_METHOD`.
    seed : int
        Seed for any randomness; the same graph, method, options and seed give the same permutation.
    **options
        Settings of the method (see ``reorder methods --settings`` or its settings dataclass).

    Returns
    -------
    Ordering

    Raises
    ------
    InputError
        Unknown method; an option the method does not declare (the message names its options and
        the closest match); a value of the wrong type or outside the allowed values; an input that
        is neither a Graph nor a square sparse matrix.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from reorder.orderings import order
    >>> A = sp.diags([-1, 2, -1], [-1, 0, 1], shape=(5, 5))
    >>> order(A, "rcm").perm.size
    5
    """
    from ..permutation import check_permutation

    name, s = resolve(method, options)
    entry = _entry(name)
    graph = _as_graph(graph, s)
    seed = int(seed)
    if name == "auto":
        # auto prices its candidates with this machine's factorization rate: measured once (about
        # half a second, then cached per user) before the clock starts, like kernel compilation
        from ..cost import machine_rates

        machine_rates()
    from ..warmup import compile_seconds

    t0 = time.perf_counter()
    c0 = compile_seconds()  # a candidate of auto may compile its kernels first: not ordering time
    if not entry.split_components:
        perm, info = _unpack(entry.impl(graph, s, seed))
    else:
        # components of one or two vertices (isolated vertices included) are placed in bulk
        from .peel import order_by_components

        perm, info = order_by_components(graph, lambda sub: _unpack(entry.impl(sub, s, seed)))
    perm = check_permutation(perm, graph.n)
    seconds = time.perf_counter() - t0 - (compile_seconds() - c0)
    return Ordering(perm=perm, method=str(method), seed=seed, info=info, seconds=seconds, settings=s)


def settings_dict(record) -> dict:
    """The settings record as a plain dict (for reports)."""
    return asdict(record) if record is not None else {}


def declared_options(name: str):
    """The declared settings (:class:`~reorder.orderings.settings.Field`) of method ``name``,
    without those an alias fixes."""
    cls, fixed, _ = _declaration(name)
    return tuple(f for f in declared(cls) if f.name not in fixed)
