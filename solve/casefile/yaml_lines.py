"""Case-file problems and the YAML reader that keeps line numbers.

The reader is PyYAML's safe loader with three limits, so that no file can make it hang,
exhaust memory or overflow the stack:

- a case file is at most :data:`MAX_FILE_BYTES` (1 MB) of text (checked before reading it all);
- anchors and aliases may expand the document to at most :data:`MAX_NODES` (100 000)
  nodes, counted on the composed node graph before anything is built, so an alias bomb
  is refused in milliseconds;
- mappings and lists nest at most :data:`MAX_DEPTH` (40) levels deep.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Iterable


import yaml


# ====================================================================== problems
@dataclass(frozen=True)
class CaseProblem:
    """One problem in a case file: where it is and how to fix it.

    Attributes
    ----------
    file : str
        The case file as named by the user.
    key : str
        Key path inside the file, e.g. ``studies.targets[0].conversion`` ('' for the file).
    message : str
        What is wrong and how to fix it, in one sentence.
    line : int | None
        1-based line of the key in the file, when known.
    """

    file: str
    key: str
    message: str
    line: int | None = None

    def __str__(self) -> str:
        where = self.file
        if self.key:
            where += f": {self.key}"
        if self.line:
            where += f" (line {self.line})"
        return f"{where}: {self.message}"


class CaseError(Exception):
    """A case file has problems; ``problems`` lists each, ``str()`` gives one per line."""

    def __init__(self, problems: Iterable[CaseProblem]):
        self.problems = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


#: Largest case file read [bytes].
MAX_FILE_BYTES = 1_000_000
#: Most YAML nodes a case file may expand to (anchors and aliases counted at every use).
MAX_NODES = 100_000
#: Deepest nesting of mappings and lists in a case file.
MAX_DEPTH = 40


class YamlLimitError(ValueError):
    """A YAML text exceeds one of the reader's limits; the message names it and the fix."""

    def __init__(self, message: str, line: int | None = None):
        super().__init__(message)
        self.line = line


# ====================================================================== YAML with lines
class LineMap(dict):
    """A YAML mapping that remembers the line of each key."""

    def __init__(self, *a, line: int | None = None, **kw):
        super().__init__(*a, **kw)
        self.line = line
        self.lines: dict = {}
        self.duplicates: list = []      # (key, line) of keys given twice


class LineList(list):
    """A YAML sequence that remembers the line of each item."""

    line: int | None = None

    def __init__(self, *a, **kw):
        super().__init__(*a, **kw)
        self.lines: list = []


class _CaseLoader(yaml.SafeLoader):
    """Safe loader: keeps line numbers, flags duplicate keys, and reads only true/false
    as booleans (so that a species called NO or a key 'on' stays text)."""


_CaseLoader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:bool"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()}
_CaseLoader.add_implicit_resolver("tag:yaml.org,2002:bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"),
                                  list("tTfF"))


def _construct_map(loader: _CaseLoader, node):
    loader.flatten_mapping(node)
    out = LineMap()
    out.line = node.start_mark.line + 1
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node, deep=True)
        if not isinstance(key, (str, int, float, bool)) or key is None:
            key = str(key)
        if key in out:
            out.duplicates.append((key, key_node.start_mark.line + 1))
            loader.duplicates.append((out, key, key_node.start_mark.line + 1))
        out[key] = loader.construct_object(value_node, deep=True)
        out.lines[key] = key_node.start_mark.line + 1
    return out


def _construct_seq(loader: _CaseLoader, node):
    out = LineList()
    out.line = node.start_mark.line + 1
    for item in node.value:
        out.append(loader.construct_object(item, deep=True))
        out.lines.append(item.start_mark.line + 1)
    return out


_CaseLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_map)
_CaseLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_SEQUENCE_TAG, _construct_seq)


def _compose_limited(self, parent, index):
    """PyYAML's compose_node with a depth limit (the composer recurses once per level)."""
    self.depth += 1
    try:
        if self.depth > MAX_DEPTH:
            mark = self.peek_event().start_mark
            raise YamlLimitError(f"mappings and lists nest more than {MAX_DEPTH} levels deep; a case file "
                                 "needs a few levels, flatten the structure", mark.line + 1)
        return yaml.SafeLoader.compose_node(self, parent, index)
    finally:
        self.depth -= 1


_CaseLoader.compose_node = _compose_limited


def expanded_size(node) -> int:
    """Number of nodes of a composed YAML node with every alias expanded (memoised, so
    linear in the distinct nodes however many times an anchor is used)."""
    sizes: dict = {}
    open_nodes: set = set()
    stack = [(node, False)]
    while stack:
        current, children_done = stack.pop()
        if id(current) in sizes:
            continue
        if isinstance(current, yaml.ScalarNode):
            sizes[id(current)] = 1
            continue
        children = [c for pair in current.value for c in pair] if isinstance(current, yaml.MappingNode) \
            else list(current.value)
        if children_done:
            sizes[id(current)] = 1 + sum(sizes[id(c)] for c in children)
            open_nodes.discard(id(current))
            continue
        if id(current) in open_nodes:       # an alias inside its own anchor: endless
            raise YamlLimitError("an alias (*name) is used inside its own anchor (&name), which never ends; "
                                 "write the values out", current.start_mark.line + 1)
        open_nodes.add(id(current))
        stack.append((current, True))
        stack.extend((c, False) for c in children if id(c) not in sizes)
    return sizes[id(node)]


def read_yaml(text: str):
    """(document, duplicate keys) of a YAML text, within the limits of this module.

    Raises
    ------
    YamlLimitError
        Text too long, too deeply nested, or expanding beyond :data:`MAX_NODES` nodes.
    yaml.YAMLError
        Not valid YAML.
    """
    if len(text) > MAX_FILE_BYTES:
        raise YamlLimitError(f"is {len(text):,} characters long; a case file is at most {MAX_FILE_BYTES:,} "
                             "(1 MB): check that this is the right file")
    loader = _CaseLoader(text)
    loader.duplicates = []
    loader.depth = 0
    try:
        node = loader.get_single_node()
        if node is None:
            return None, []
        size = expanded_size(node)
        if size > MAX_NODES:
            raise YamlLimitError(f"expands to {size:,} YAML nodes through its anchors and aliases (&name, *name); "
                                 f"a case file may hold at most {MAX_NODES:,}: write the values out or use "
                                 "fewer aliases")
        return loader.construct_document(node), loader.duplicates
    finally:
        loader.dispose()
