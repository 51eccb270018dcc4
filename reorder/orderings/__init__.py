"""Registry of orderings: every ordering is a plain function of one signature, registered by name.

An ordering function takes a :class:`~reorder.graph.Graph` and keyword options and returns
``(perm, info)``: a 0-based permutation (new position ``k`` holds old vertex ``perm[k]``, i.e. the
reordered matrix is ``A[perm][:, perm]``) and a dict of facts worth reporting. :func:`order` is the
single entry point: it splits the graph into connected components (unless the ordering says it
handles them itself), calls the function, concatenates, checks the result and times it.

Adding an ordering::

    from reorder.orderings import register

    @register("mine", summary="one line for `reorder methods`")
    def mine(graph, *, seed=0, **options):
        ...
        return perm, {"something": 1}
"""

from __future__ import annotations

import importlib
import time
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Callable

if TYPE_CHECKING:  # imported on use: listing the methods must not load SciPy or the kernels
    import numpy as np

    from ..graph import Graph

__all__ = ["Ordering", "register", "order", "available", "describe", "get"]


@dataclass(frozen=True, eq=False)
class Ordering:
    """The result of an ordering.

    Attributes
    ----------
    perm : ndarray of int64
        New position ``k`` holds old index ``perm[k]``; the reordered matrix is ``A[perm][:, perm]``.
    method : str
    seed : int
    info : dict
        What a user may want to see: eigensolver path, separator sizes, timings.
    seconds : float
        Wall time of the ordering.
    """

    perm: np.ndarray
    method: str
    seed: int = 0
    info: dict = field(default_factory=dict)
    seconds: float = 0.0

    @property
    def iperm(self) -> np.ndarray:
        """Inverse permutation: ``iperm[old] = new``."""
        import numpy as np

        inv = np.empty_like(self.perm)
        inv[self.perm] = np.arange(self.perm.size, dtype=self.perm.dtype)
        return inv


@dataclass(frozen=True)
class _Entry:
    name: str
    func: Callable
    summary: str
    split_components: bool
    order: int


_REGISTRY: dict[str, _Entry] = {}

#: The built-in orderings: ``name -> (module, rank, summary)``. Listing them (``reorder methods``,
#: ``--help``, checking a ``--method``) reads this table only, so it does not import the ordering
#: modules, SciPy or the compiled kernels; the module is imported when the method is first used.
#: ``tests/test_orderings_basic.py`` checks the table against what the modules register.
_BUILTIN: dict[str, tuple[str, int, str]] = {
    "natural": ("basic", 0, "the order of the file (identity permutation)"),
    "auto": ("auto", 5, "best of nd, minimum degree and RCM by exact nnz(L)"),
    "rcm": ("basic", 10, "reverse Cuthill-McKee (SciPy), the bandwidth baseline"),
    "spectral": ("envelope", 20, "Fiedler-vector envelope ordering refined by Sloan's algorithm"),
    "mindegree": ("mindegree", 30, "minimum degree (approximate external degrees, quotient graph)"),
    "nd": ("dissection", 40, "nested dissection: multilevel spectral vertex separators, minimum-degree leaves"),
    "nd-fast": ("dissection", 41,
                "nested dissection with cheaper settings (nd --effort fast), for a single factorization"),
    "rsb": ("dissection", 45, "recursive spectral bisection into --parts blocks, ordered block by block"),
}


def register(name: str, *, summary: str = "", split_components: bool = True, rank: int = 100):
    """Decorator registering an ordering function under ``name``.

    Parameters
    ----------
    name : str
        The method name used by ``--method``.
    summary : str
        One line shown by ``reorder methods``.
    split_components : bool
        If True (default), :func:`order` calls the function once per connected component with
        at least two vertices, so it may assume a connected graph. If False, it receives the whole
        graph and handles components itself.
    rank : int
        Listing position (smaller first).
    """

    def deco(func):
        _REGISTRY[name] = _Entry(name, func, summary or (func.__doc__ or "").strip().split("\n")[0], split_components, rank)
        return func

    return deco


def _import(module: str) -> None:
    # importing a module registers its orderings; optional ones may be absent in early builds
    try:
        importlib.import_module(f"{__name__}.{module}")
    except ModuleNotFoundError as exc:
        if exc.name != f"{__name__}.{module}":
            raise


def _load_all() -> None:
    for mod in dict.fromkeys(m for m, _, _ in _BUILTIN.values()):
        _import(mod)


def _load(name: str) -> None:
    """Import the module of a built-in ordering that is not registered yet."""
    if name not in _REGISTRY and name in _BUILTIN:
        _import(_BUILTIN[name][0])


def available() -> list[str]:
    """Names of the orderings (built-in and registered), in listing order; imports nothing."""
    ranks = {name: rank for name, (_, rank, _) in _BUILTIN.items()}
    ranks.update({e.name: e.order for e in _REGISTRY.values()})
    return sorted(ranks, key=lambda name: (ranks[name], name))


def describe() -> dict[str, str]:
    """``{name: one-line summary}`` of the orderings, in listing order; imports nothing."""
    return {name: (_REGISTRY[name].summary if name in _REGISTRY else _BUILTIN[name][2]) for name in available()}


def get(name: str) -> Callable:
    """The registered function for ``name`` (``KeyError`` with the known names otherwise)."""
    _load(name)
    if name not in _REGISTRY:
        raise KeyError(f"unknown ordering '{name}' (known: {', '.join(available())})")
    return _REGISTRY[name].func


def _unpack(result):
    import numpy as np

    if isinstance(result, tuple):
        perm, info = result
    elif isinstance(result, Ordering):
        perm, info = result.perm, dict(result.info)
    else:
        perm, info = result, {}
    return np.asarray(perm, dtype=np.int64), dict(info or {})


def order(graph: Graph, method: str = "rcm", *, seed: int = 0, **options) -> Ordering:
    """Order ``graph`` with the registered ``method``.

    Components are ordered one after another in the order of their smallest vertex; isolated
    vertices keep their relative order. The result is checked to be a permutation.

    Parameters
    ----------
    graph : Graph
    method : str
        A name from :func:`available`.
    seed : int
        Seed for any randomness; the same graph, method, options and seed give the same permutation.
    **options
        Passed to the ordering function.

    Returns
    -------
    Ordering
    """
    import numpy as np

    from ..graph import component_lists, subgraph
    from ..permutation import check_permutation

    _load(method)
    if method not in _REGISTRY:
        raise KeyError(f"unknown ordering '{method}' (known: {', '.join(available())})")
    entry = _REGISTRY[method]
    t0 = time.perf_counter()
    if not entry.split_components:
        perm, info = _unpack(entry.func(graph, seed=seed, **options))
    else:
        comps = component_lists(graph) if graph.n else []
        if len(comps) <= 1:
            perm, info = _unpack(entry.func(graph, seed=seed, **options)) if graph.n > 1 else (np.arange(graph.n, dtype=np.int64), {})
        else:
            parts, infos = [], []
            for verts in comps:
                if verts.size <= 2:
                    parts.append(verts)
                    continue
                sub = subgraph(graph, verts)
                p, inf = _unpack(entry.func(sub, seed=seed, **options))
                parts.append(verts[p])
                infos.append(inf)
            perm = np.concatenate(parts).astype(np.int64)
            info = {"components": len(comps)}
            if len(infos) == 1:
                info.update(infos[0])
            elif infos:
                info["component_info"] = infos
    perm = check_permutation(perm, graph.n)
    return Ordering(perm=perm, method=method, seed=seed, info=info, seconds=time.perf_counter() - t0)
