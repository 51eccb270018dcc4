"""The separator tree of nested dissection: a type with validation, summary and its JSON layout.

JSON layout (``info["separator_tree"]`` of ``nd``, written by ``reorder order --tree``; a contract)::

    {"format": "reorder-separator-tree", "version": 1, "n": n, "root": 0,
     "leaf_size": ..., "balance": ...,
     "nodes": [{"id": i, "parent": p (-1 for the root), "depth": d, "kind": k,
                "children": [ids], "start": s, "stop": t, "separator": m, "sizes": [..]}, ...]}

Node ``i`` owns positions ``start:stop`` (half-open) of the new order, i.e. the old vertices
``perm[start:stop]``. ``kind`` is ``"separator"`` (two children and a separator of ``separator``
vertices placed last, at ``stop - separator:stop``), ``"components"`` (no separator; the children are
unions of connected components, no edge joins two of them) or ``"leaf"`` (ordered by minimum degree;
no children). Children's ranges are consecutive and tile ``start:stop - separator`` in the order
listed; ``sizes`` are the children's sizes. Node ids are assigned in depth-first preorder. A
separator node with ``"multisector": true`` holds the multisector of a subtree won by multisection:
its separator is all the separator vertices of that subtree (removing them disconnects its leaves
from each other), and its two children are its leaves in two consecutive groups (a leaf, or a
``"components"`` node over leaves), so its ``sizes`` need not meet the balance window.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field

import numpy as np

from ...permutation import inverse_permutation

__all__ = ["SeparatorTree", "FORMAT", "VERSION"]

#: ``format`` and ``version`` of the JSON layout
FORMAT = "reorder-separator-tree"
VERSION = 1


@dataclass
class SeparatorTree:
    """A separator tree: node dicts in the JSON layout of this module, plus the run's leaf size and
    balance.

    Examples
    --------
    >>> import scipy.sparse as sp
    >>> from reorder.orderings import order
    >>> A = sp.diags([-1, 2, -1], [-1, 0, 1], shape=(200, 200))
    >>> o = order(A, "nd", effort="fast", leaf_size=20)
    >>> t = SeparatorTree.from_json(o.info["separator_tree"])
    >>> t.validate(o.perm)
    True
    """

    n: int
    nodes: list = field(default_factory=list)
    leaf_size: int | None = None
    balance: float | None = None
    root: int = 0

    def to_json(self) -> dict:
        """The JSON-able dict of the layout above (same keys, same order)."""
        return {"format": FORMAT, "version": VERSION, "n": int(self.n), "root": int(self.root),
                "leaf_size": self.leaf_size, "balance": self.balance, "nodes": self.nodes}

    @classmethod
    def from_json(cls, data) -> "SeparatorTree":
        """A tree from the dict of :meth:`to_json` or its JSON text; ValueError if it is not one."""
        if isinstance(data, (str, bytes)):
            data = json.loads(data)
        if not isinstance(data, dict) or not isinstance(data.get("nodes"), list) or "n" not in data:
            raise ValueError("not a separator tree (needs 'n' and a list of 'nodes')")
        if data.get("format", FORMAT) != FORMAT or int(data.get("version", VERSION)) > VERSION:
            raise ValueError(f"unknown separator-tree format {data.get('format')!r} version {data.get('version')!r}")
        return cls(n=int(data["n"]), nodes=[dict(nd) for nd in data["nodes"]], leaf_size=data.get("leaf_size"),
                   balance=data.get("balance"), root=int(data.get("root", 0)))

    def validate(self, perm=None, graph=None) -> bool:
        """Check the tree (against its permutation and graph when given); ValueError if wrong.

        Checks: node ids and parent/child links agree; the root covers ``0:n``; children tile
        ``start:stop - separator`` in order and match ``sizes``; every leaf and separator range is
        covered exactly once; and, given ``perm`` and ``graph``, no edge of the graph joins two
        different children of a node (each separator, or the component split, separates its
        children). Returns True.
        """

        n = self.n
        nodes = self.nodes
        if perm is not None and np.asarray(perm).size != n or graph is not None and graph.n != n:
            raise ValueError("tree size does not match the permutation or graph")
        if n == 0:
            return True
        if not 0 <= self.root < len(nodes) or nodes[self.root]["start"] != 0 or nodes[self.root]["stop"] != n:
            raise ValueError("root does not cover 0:n")
        rows = cols = None
        if graph is not None and perm is not None:
            inv = inverse_permutation(perm)
            rows = inv[np.repeat(np.arange(n, dtype=np.int64), np.diff(graph.indptr))]
            cols = inv[graph.indices]
        covered = np.zeros(n, dtype=np.int64)
        for i, nd in enumerate(nodes):
            if nd["id"] != i:
                raise ValueError(f"node {i} has id {nd['id']}")
            s, t, m = nd["start"], nd["stop"], nd["separator"]
            if not 0 <= s <= t <= n or not 0 <= m <= t - s:
                raise ValueError(f"node {i}: bad range {s}:{t} with separator {m}")
            kids = nd["children"]
            if nd["kind"] == "leaf":
                if kids or m:
                    raise ValueError(f"leaf {i} has children or a separator")
                covered[s:t] += 1
                continue
            covered[t - m:t] += 1
            if nd["kind"] == "separator" and len(kids) != 2:
                raise ValueError(f"separator node {i} has {len(kids)} children")
            if len(nd["sizes"]) != len(kids):
                raise ValueError(f"node {i}: {len(nd['sizes'])} sizes for {len(kids)} children")
            pos = s
            childlab = np.full(n, -1, dtype=np.int64)
            for j, c in enumerate(kids):
                if not 0 <= c < len(nodes):
                    raise ValueError(f"node {i}: child {c} does not exist")
                ch = nodes[c]
                if ch["parent"] != i or ch["start"] != pos:
                    raise ValueError(f"child {c} of node {i} is not linked or not consecutive")
                if ch["stop"] - ch["start"] != nd["sizes"][j]:
                    raise ValueError(f"node {i}: sizes disagree with child {c}")
                childlab[ch["start"]:ch["stop"]] = j
                pos = ch["stop"]
            if pos != t - m:
                raise ValueError(f"children of node {i} do not tile its range")
            if rows is None:
                continue
            # no edge between different children (removing the separator disconnects them)
            lr, lc = childlab[rows], childlab[cols]
            if np.any((lr >= 0) & (lc >= 0) & (lr != lc)):
                raise ValueError(f"node {i}: an edge joins two different children")
        if not np.all(covered == 1):
            raise ValueError("leaf and separator ranges do not cover every position exactly once")
        return True

    def summary(self, levels: int = 3) -> list[dict]:
        """Separator sizes and balance of the top ``levels`` separator levels.

        Levels count separator nodes only (component splits are looked through). Returns one dict
        per level: ``level``, ``separators`` (count), ``sizes`` (separator sizes, largest first, at
        most 16), ``separator_total``, ``balance_min`` and ``balance_mean`` (smaller side / (both
        sides) of each separator, 0.5 is perfect).
        """
        nodes = self.nodes
        if not nodes:
            return []
        out = []
        frontier = [self.root]
        for lev in range(levels):
            seps = []
            # descend through component nodes to the next separator nodes
            todo, found = list(frontier), []
            while todo:
                i = todo.pop()
                nd = nodes[i]
                if nd["kind"] == "separator":
                    found.append(i)
                elif nd["kind"] == "components":
                    todo.extend(nd["children"])
            if not found:
                break
            found.sort()
            for i in found:
                nd = nodes[i]
                a, b = nd["sizes"]
                seps.append((nd["separator"], min(a, b) / max(a + b, 1)))
            sizes = sorted((s for s, _ in seps), reverse=True)
            bal = [b for _, b in seps]
            out.append({"level": lev, "separators": len(seps), "sizes": sizes[:16], "separator_total": int(sum(sizes)),
                        "balance_min": float(min(bal)), "balance_mean": float(np.mean(bal))})
            frontier = [c for i in found for c in nodes[i]["children"]]
        return out
