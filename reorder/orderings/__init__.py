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

import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from ..graph import Graph, component_lists, subgraph
from ..permutation import check_permutation

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


def _load_all() -> None:
    # importing the modules registers their orderings; optional ones may be absent in early builds
    import importlib

    for mod in ("basic", "envelope", "mindegree", "dissection", "auto"):
        try:
            importlib.import_module(f"{__name__}.{mod}")
        except ModuleNotFoundError as exc:
            if exc.name != f"{__name__}.{mod}":
                raise


def available() -> list[str]:
    """Names of the registered orderings, in listing order."""
    _load_all()
    return [e.name for e in sorted(_REGISTRY.values(), key=lambda e: (e.order, e.name))]


def describe() -> dict[str, str]:
    """``{name: one-line summary}`` of the registered orderings."""
    _load_all()
    return {name: _REGISTRY[name].summary for name in available()}


def get(name: str) -> Callable:
    """The registered function for ``name`` (``KeyError`` with the known names otherwise)."""
    _load_all()
    if name not in _REGISTRY:
        raise KeyError(f"unknown ordering '{name}' (known: {', '.join(available())})")
    return _REGISTRY[name].func


def _unpack(result):
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
    _load_all()
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
