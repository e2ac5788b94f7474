"""The import graph of imputer_app has no circle, counting imports made only for type checking.

The graph comes from grimp (the library behind import-linter), which reads every
``import`` statement of the package, those under ``if TYPE_CHECKING:`` and inside
functions included.
"""

from __future__ import annotations

import grimp
import pytest


def circles(graph: grimp.ImportGraph) -> list[list[str]]:
    """Groups of modules that import each other, directly or round a longer circle (Tarjan 1972)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(module: str) -> None:
        # Depth-first search with an explicit stack: a long import chain never hits the recursion limit.
        work = [(module, iter(sorted(graph.find_modules_directly_imported_by(module))))]
        index[module] = low[module] = len(index)
        stack.append(module)
        on_stack.add(module)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = len(index)
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph.find_modules_directly_imported_by(child)))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                parent = work[-1][0]
                low[parent] = min(low[parent], low[node])
            if low[node] == index[node]:
                group = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    group.append(member)
                    if member == node:
                        break
                if len(group) > 1 or graph.direct_import_exists(importer=node, imported=node):
                    found.append(sorted(group))

    for module in sorted(graph.modules):
        if module not in index:
            visit(module)
    return found


@pytest.fixture(scope="module")
def graph() -> grimp.ImportGraph:
    return grimp.build_graph("imputer_app", include_external_packages=False)


def test_the_graph_is_read_with_type_checking_imports(graph):
    # gui.state imports FillResult from the engine only under TYPE_CHECKING; the graph must see it.
    assert graph.direct_import_exists(importer="imputer_app.gui.state", imported="imputer_app.engine")


def test_no_module_of_imputer_app_is_in_an_import_circle(graph):
    assert circles(graph) == []


@pytest.mark.parametrize(
    ("imports", "expected"),
    [
        ({"a": {"b"}, "b": {"a"}}, [["a", "b"]]),
        ({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}, [["a", "b", "c"]]),
        ({"a": {"b"}, "b": {"c"}, "d": {"a"}}, []),
        ({"a": {"a"}}, [["a"]]),
    ],
)
def test_circles_are_found_in_a_small_graph(imports, expected):
    small = grimp.ImportGraph()
    for importer, imported in imports.items():
        small.add_module(importer)
        for other in imported:
            small.add_module(other)
            small.add_import(importer=importer, imported=other)
    assert circles(small) == expected
