"""The loop-free stage order matches networkx's lexicographical topological sort, and loops are reported as such."""

from __future__ import annotations

import networkx as nx
from hypothesis import given
from hypothesis import strategies as st

from afecheck.graph.stages import _acyclic_order


@st.composite
def _upstreams(draw: st.DrawFn) -> tuple[list[str], dict[str, tuple[str, ...]]]:
    n = draw(st.integers(1, 12))
    names = [f"U{i}" for i in draw(st.permutations(range(n)))]
    edges = draw(st.sets(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)), max_size=3 * n))
    upstream = {r: tuple(sorted({names[u] for u, v in edges if names[v] == r and u != v})) for r in names}
    return names, upstream


@given(_upstreams())
def test_order_matches_networkx(case: tuple[list[str], dict[str, tuple[str, ...]]]) -> None:
    # oracle: networkx (not written by this project)
    names, upstream = case
    order = {r: i for i, r in enumerate(names)}
    g = nx.DiGraph()
    g.add_nodes_from(names)
    g.add_edges_from((u, r) for r in names for u in upstream[r])
    got = _acyclic_order(names, upstream, order)
    if nx.is_directed_acyclic_graph(g):
        assert got == list(nx.lexicographical_topological_sort(g, key=order.__getitem__))
    else:
        assert got is None
