"""Case-file problems and the YAML reader that keeps line numbers.
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


def read_yaml(text: str):
    loader = _CaseLoader(text)
    loader.duplicates = []
    try:
        return loader.get_single_data(), loader.duplicates
    finally:
        loader.dispose()
