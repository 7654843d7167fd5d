"""The one YAML loader for every file hearnav reads: safe tags only, bounded, strict about duplicate keys.

A YAML document can describe far more than its text: nested aliases ("billion laughs") expand a kilobyte
into billions of values, and deep nesting exhausts the recursion limit. Before anything is built, the
events are scanned for depth and alias count, and the composed graph's expanded size (every alias counted
each time it is used) is measured in linear time; documents over the limits are refused with one line.
"""

from __future__ import annotations

from typing import Any

import yaml

#: Limits of a document: nesting depth, alias uses, and values once every alias is expanded.
MAX_DEPTH = 64
MAX_ALIASES = 1000
MAX_NODES = 200_000


class YamlRefused(yaml.YAMLError):
    """A document that is valid YAML but over hearnav's limits, or has a duplicate key."""

    def __init__(self, problem: str, mark: yaml.Mark | None = None):
        super().__init__(problem)
        self.problem, self.problem_mark = problem, mark

    def __str__(self) -> str:
        where = f" at line {self.problem_mark.line + 1}, column {self.problem_mark.column + 1}" \
            if self.problem_mark else ""
        return f"{self.problem}{where}"


class _Loader(yaml.SafeLoader):
    """SafeLoader that refuses duplicate mapping keys."""

    def construct_mapping(self, node: yaml.MappingNode, deep: bool = False) -> dict:
        seen: set = set()
        for key_node, _ in node.value:
            key = self.construct_object(key_node, deep=True)
            try:
                duplicate = key in seen
            except TypeError:  # an unhashable key: SafeLoader reports it below
                break
            if duplicate:
                raise YamlRefused(f"duplicate key {key!r} (expected each key once in a mapping)", key_node.start_mark)
            seen.add(key)
        return super().construct_mapping(node, deep=deep)


def _check_events(text: str) -> None:
    depth = aliases = 0
    for event in yaml.parse(text, Loader=yaml.SafeLoader):
        if isinstance(event, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
            depth += 1
            if depth > MAX_DEPTH:
                raise YamlRefused(f"nesting deeper than {MAX_DEPTH} levels (expected a shallower document)",
                                  event.start_mark)
        elif isinstance(event, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
            depth -= 1
        elif isinstance(event, yaml.AliasEvent):
            aliases += 1
            if aliases > MAX_ALIASES:
                raise YamlRefused(f"more than {MAX_ALIASES} aliases (expected at most {MAX_ALIASES}; write the "
                                  f"values out)", event.start_mark)


def _expanded_size(node: yaml.Node, sizes: dict[int, int]) -> int:
    """Nodes of ``node`` with every alias expanded (memoised on shared nodes, so linear in the graph)."""
    known = sizes.get(id(node))
    if known is not None:
        return known
    sizes[id(node)] = MAX_NODES + 1  # a node met again while still being counted is a cycle: refuse it
    if isinstance(node, yaml.MappingNode):
        total = 1 + sum(_expanded_size(k, sizes) + _expanded_size(v, sizes) for k, v in node.value)
    elif isinstance(node, yaml.SequenceNode):
        total = 1 + sum(_expanded_size(v, sizes) for v in node.value)
    else:
        total = 1
    sizes[id(node)] = min(total, MAX_NODES + 1)
    return sizes[id(node)]


def load_yaml_text(text: str) -> Any:
    """The Python value of one YAML document, with safe tags only.

    Raises
    ------
    yaml.YAMLError
        A syntax error, or :class:`YamlRefused` for a document over the limits or with a duplicate key.
    """
    _check_events(text)
    loader = _Loader(text)
    try:
        node = loader.get_single_node()
        if node is None:
            return None
        if _expanded_size(node, {}) > MAX_NODES:
            raise YamlRefused(f"more than {MAX_NODES} values once its aliases are expanded (expected a plain "
                              f"document; write the values out)", node.start_mark)
        return loader.construct_document(node)
    finally:
        loader.dispose()
