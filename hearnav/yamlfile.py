"""The one YAML loader for every file hearnav reads: safe tags only, bounded, strict about duplicate keys.

A YAML document can describe far more than its text: nested aliases ("billion laughs") expand a kilobyte
into billions of values, and deep nesting exhausts the recursion limit. Before anything is built, the
events are scanned for depth and alias count, and the composed graph's expanded size (every alias counted
each time it is used) is measured in linear time; documents over the limits are refused with one line.

Numbers: an integer literal longer than :data:`MAX_INT_DIGITS` digits is refused in one line (Python refuses
to convert more than 4300 digits with a ValueError, and no value hearnav reads needs a tenth of that). A
number in exponent form without a dot, such as ``1e-3``, is a number as in YAML 1.2 and JSON (PyYAML follows
YAML 1.1, which would read it as the text "1e-3"); ``1e400`` reads as infinity, which the schemas refuse.
"""

from __future__ import annotations

import re
from typing import Any

import yaml

from hearnav.errors import short_repr

#: Limits of a document: nesting depth, alias uses, and values once every alias is expanded.
MAX_DEPTH = 64
MAX_ALIASES = 1000
MAX_NODES = 200_000
#: Most digits of an integer literal (a 64-bit seed has 20).
MAX_INT_DIGITS = 100
# Floats of the YAML 1.2 core schema that YAML 1.1 reads as text: an exponent with no dot (YAML 1.2.2,
# section 10.2.1.4, "Core Schema" float: [-+]? ( \. [0-9]+ | [0-9]+ ( \. [0-9]* )? ) ( [eE] [-+]? [0-9]+ )?).
_EXPONENT_FLOAT = re.compile(r"^[-+]?[0-9]+[eE][-+]?[0-9]+$")


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

    def construct_yaml_int(self, node: yaml.ScalarNode) -> int:
        """An integer, refusing literals too long to convert (they would raise ValueError)."""
        text = str(node.value).lstrip("+-")
        digits = sum(c.isalnum() for c in (text[2:] if text[:2].lower() in ("0x", "0o", "0b") else text))
        if digits > MAX_INT_DIGITS:
            raise YamlRefused(f"an integer with {digits} digits (expected at most {MAX_INT_DIGITS} digits)",
                              node.start_mark)
        return super().construct_yaml_int(node)


_Loader.add_constructor("tag:yaml.org,2002:int", _Loader.construct_yaml_int)
_Loader.add_implicit_resolver("tag:yaml.org,2002:float", _EXPONENT_FLOAT, list("-+0123456789"))


def value_kind(value: Any) -> str:
    """What a loaded YAML value is, for messages: ``the text '2.6'``, ``the boolean true``, ``binary data``."""
    if isinstance(value, bool):
        return f"the boolean {str(value).lower()}"
    if isinstance(value, (int, float)):
        return f"the number {short_repr(value)}"
    if isinstance(value, str):
        return f"the text {short_repr(value)}"
    if isinstance(value, (bytes, bytearray)):
        return f"binary data (!!binary) {short_repr(bytes(value))}"
    if value is None:
        return "nothing (null)"
    kind = {list: "a list", dict: "a mapping"}.get(type(value), f"a {type(value).__name__}")
    return f"{kind} {short_repr(value)}"


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
        try:
            return loader.construct_document(node)
        except (ValueError, TypeError, AttributeError, OverflowError) as exc:  # e.g. 2001-13-45, !!int abc
            raise YamlRefused(f"a value that cannot be read (expected plain numbers, text, lists and mappings, "
                              f"got {type(exc).__name__}: {short_repr(str(exc))})") from None
    finally:
        loader.dispose()
