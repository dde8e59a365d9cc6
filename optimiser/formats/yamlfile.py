"""YAML files with positions: read once, refuse duplicate keys, report errors by file:line:col.

Shared by every file Railwright reads (design and spec files, parts catalogues, transformer
data). PyYAML's silent last-one-wins on a repeated key is refused; pydantic's errors are walked
back along their location to the YAML node they came from.
"""

from __future__ import annotations

import re
from pathlib import Path

import yaml
from pydantic import ValidationError

__all__ = ["DesignError", "read_yaml", "validate", "validation_problems"]

_Loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


class DesignError(ValueError):
    """One or more problems in a design or spec file; ``problems`` holds one line per problem."""

    def __init__(self, problems):
        self.problems = list(problems)
        super().__init__("\n".join(self.problems))




def read_yaml(path):
    """Read a YAML file once; return (data, node tree). Raises DesignError on unreadable YAML,
    an empty file, a repeated key, or a top level that is not a mapping."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise DesignError([f"{path}: cannot read: {exc.strerror}"]) from None
    loader = _Loader(text)
    try:
        node = loader.get_single_node()
        if node is None:
            raise DesignError([f"{path}: the file is empty"])
        problems = list(_duplicate_keys(node, path))
        if problems:
            raise DesignError(problems)
        data = loader.construct_document(node)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"{path}:{mark.line + 1}:{mark.column + 1}" if mark else str(path)
        problem = getattr(exc, "problem", None) or str(exc)
        raise DesignError([f"{where}: not readable as YAML: {problem}"]) from None
    finally:
        loader.dispose()
    if not isinstance(data, dict):
        raise DesignError([f"{path}:1:1: the top level must be a mapping of sections"])
    return data, node


def _duplicate_keys(node, path, prefix=""):
    if isinstance(node, yaml.MappingNode):
        seen = {}
        for key, value in node.value:
            name = key.value
            here = f"{prefix}.{name}" if prefix else name
            if name in seen:
                yield (f"{path}:{key.start_mark.line + 1}:{key.start_mark.column + 1}: {here}: "
                       f"duplicate key (first at line {seen[name] + 1})")
            else:
                seen[name] = key.start_mark.line
            yield from _duplicate_keys(value, path, here)
    elif isinstance(node, yaml.SequenceNode):
        for i, item in enumerate(node.value):
            yield from _duplicate_keys(item, path, f"{prefix}.{i}")


def _locate(node, loc):
    """Walk a YAML node tree along a pydantic error location; return (node, dotted path)."""
    parts = []
    for item in loc:
        if isinstance(node, yaml.MappingNode) and isinstance(item, str):
            for key, value in node.value:
                if key.value == item:
                    node = value
                    parts.append(item)
                    break
            else:
                if item[:1].isupper() or item in ("str", "function-after"):
                    continue  # a union member's tag, not a key
                parts.append(item)
        elif isinstance(node, yaml.SequenceNode) and isinstance(item, int):
            if item < len(node.value):
                node = node.value[item]
            parts.append(str(item))
        elif isinstance(item, int):
            parts.append(str(item))
        elif node is None or not (item[:1].isupper() or item in ("str", "function-after")):
            parts.append(str(item))
    return node, ".".join(parts)


def _message(error) -> str:
    msg = error["msg"]
    for prefix in ("Value error, ", "Assertion failed, "):
        if msg.startswith(prefix):
            msg = msg[len(prefix):]
    if error["type"] == "extra_forbidden":
        msg = "unknown key (check the spelling; see the example designs in specs/)"
    elif error["type"] == "missing":
        msg = "required key is missing"
    return msg


def validation_problems(exc: ValidationError, node=None, source="design") -> list[str]:
    """One readable line per pydantic error, with file:line:col when a node tree is given."""
    errors = exc.errors()
    lines = []
    for e in errors:
        loc = tuple(e["loc"])
        # "part name or parameter block": drop the "should be a string" noise when the block
        # itself has errors
        if e["type"] == "string_type" and loc[-1] == "str" and any(
                other[: len(loc) - 1] == loc[:-1] and other != loc for other in
                (tuple(x["loc"]) for x in errors)):
            continue
        for sub_loc, message in _split_model_problems(loc, _message(e)):
            text = _positioned(node, sub_loc, message, source)
            if text not in lines:
                lines.append(text)
    return lines


_PATH = re.compile(r"^([A-Za-z_][A-Za-z0-9_]*(?:\.[A-Za-z0-9_-]+)*): (.*)$", re.S)


def _split_model_problems(loc, message):
    """A cross-field check reports several problems as "a.b: text; c.d: text"; give each its own
    location below the model's, so each gets its own line number."""
    pieces = [p.strip() for p in message.split("; ")] if "; " in message else [message]
    out = []
    for piece in pieces:
        m = _PATH.match(piece)
        if m and "." in m.group(1) or m and m.group(1) in ("rectifier", "transformer", "nodes"):
            parts = tuple(int(p) if p.isdigit() else p for p in m.group(1).split("."))
            out.append((loc + parts, m.group(2)))
        else:
            out.append((loc, piece))
    return out


def _positioned(node, loc, message, source):
    target, dotted = _locate(node, loc)
    where = source
    if target is not None and hasattr(target, "start_mark"):
        where = f"{source}:{target.start_mark.line + 1}:{target.start_mark.column + 1}"
    return f"{where}: {dotted}: {message}" if dotted else f"{where}: {message}"


def validate(model_type, data, node=None, source="design"):
    """Validate a dict against a file model; raise DesignError with every problem."""
    try:
        return model_type.model_validate(data)
    except ValidationError as exc:
        raise DesignError(validation_problems(exc, node, source)) from None
