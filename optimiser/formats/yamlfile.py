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
        # one line per problem, whatever a key or value held
        self.problems = [str(p).replace("\r", "\\r").replace("\n", "\\n") for p in problems]
        super().__init__("\n".join(self.problems))




#: Largest file read. [bytes] A design or spec file is a few kB; a parts file a few tens.
MAX_FILE_BYTES = 1_000_000
#: Most YAML nodes a file may expand to, aliases counted each time they are used: a file of
#: anchors nested in anchors ("billion laughs") would otherwise expand without bound.
MAX_NODES = 50_000
#: Deepest nesting of blocks in a file.
MAX_DEPTH = 64

_STR_TAG = "tag:yaml.org,2002:str"
_BOMS = ((b"\xff\xfe\x00\x00", "UTF-32"), (b"\x00\x00\xfe\xff", "UTF-32"),
         (b"\xff\xfe", "UTF-16"), (b"\xfe\xff", "UTF-16"))


def _decode(raw: bytes, path) -> str:
    """The file's text, or DesignError saying what encoding it is in and what to do."""
    for bom, name in _BOMS:
        if raw.startswith(bom):
            raise DesignError([f"{path}:1:1: the file is {name} text; save it as UTF-8"])
    if b"\x00" in raw[:4096]:
        guess = "UTF-16 text" if raw[1:2] == b"\x00" or raw[:1] == b"\x00" else "not text"
        raise DesignError([f"{path}:1:1: the file is {guess} (it holds NUL bytes); a design "
                           "or spec file is YAML text saved as UTF-8"])
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        raise DesignError([f"{path}:{line}:{column}: not UTF-8 text (byte "
                           f"0x{raw[exc.start]:02x}); save the file as UTF-8 (an editor's "
                           "'Latin-1' or 'Windows-1252' file needs converting)"]) from None
    return text.removeprefix("\ufeff")


def read_yaml(path):
    """Read a YAML file once; return (data, node tree).

    Raises DesignError on: a file too large, not UTF-8 text, unreadable YAML, an empty file,
    a repeated key, a key that is not a plain name (``? [a, b]``, ``1:``), an alias that
    contains itself or expands too far, nesting too deep, or a top level that is not a mapping.
    Problems in the node tree are all reported at once.
    """
    path = Path(path)
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise DesignError([f"{path}: the file is {size:,} bytes; a design or spec file is "
                               f"at most {MAX_FILE_BYTES:,}"])
        raw = path.read_bytes()
    except OSError as exc:
        raise DesignError([f"{path}: cannot read: {exc.strerror or exc}"]) from None
    text = _decode(raw[:MAX_FILE_BYTES + 1], path)
    loader = _Loader(text)
    try:
        node = loader.get_single_node()
        if node is None:
            raise DesignError([f"{path}: the file is empty"])
        problems = _tree_problems(node, path)
        if problems:
            raise DesignError(problems)
        data = loader.construct_document(node)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
        where = f"{path}:{mark.line + 1}:{mark.column + 1}" if mark else str(path)
        if isinstance(exc, yaml.reader.ReaderError):
            before = text[:exc.position]
            where = f"{path}:{before.count(chr(10)) + 1}:{len(before) - before.rfind(chr(10))}"
        problem = getattr(exc, "problem", None) or getattr(exc, "reason", None) or str(exc)
        problem = " ".join(str(problem).split())
        raise DesignError([f"{where}: not readable as YAML: {problem}"]) from None
    except RecursionError:
        raise DesignError([f"{path}: nested too deeply to read (at most {MAX_DEPTH} levels)"]) \
            from None
    finally:
        loader.dispose()
    if not isinstance(data, dict):
        raise DesignError([f"{path}:1:1: the top level must be a mapping of sections"])
    return data, node


def _at(path, node):
    return f"{path}:{node.start_mark.line + 1}:{node.start_mark.column + 1}"


def _tree_problems(root, path) -> list[str]:
    """Every structural problem of a node tree, without recursion (an alias may share a node
    many times; one that contains itself would never end)."""
    problems = []
    budget = MAX_NODES
    # (node, dotted path, ids of the nodes above it, depth)
    stack = [(root, "", frozenset(), 0)]
    while stack:
        node, prefix, above, depth = stack.pop()
        budget -= 1
        if budget < 0:
            return problems + [f"{path}: the file expands to more than {MAX_NODES:,} values "
                               "(anchors and aliases nested in each other); write it out plainly"]
        if id(node) in above:
            problems.append(f"{_at(path, node)}: {prefix or 'top level'}: an alias refers to a "
                            "block that contains it (it would never end)")
            continue
        if depth > MAX_DEPTH:
            problems.append(f"{_at(path, node)}: {prefix}: nested more than {MAX_DEPTH} levels deep")
            continue
        inside = above | {id(node)}
        children = []
        if isinstance(node, yaml.MappingNode):
            seen = {}
            for key, value in node.value:
                if not isinstance(key, yaml.ScalarNode) or key.tag != _STR_TAG:
                    shown = key.value if isinstance(key, yaml.ScalarNode) else "a block"
                    problems.append(f"{_at(path, key)}: {prefix or 'top level'}: key {shown!r} "
                                    "is not a name; keys are plain words such as 'voltage'"
                                    if isinstance(key, yaml.ScalarNode) else
                                    f"{_at(path, key)}: {prefix or 'top level'}: a key must be "
                                    "a plain name, not a list or block ('? [a, b]' is refused)")
                    continue
                name = key.value
                here = f"{prefix}.{name}" if prefix else name
                if name in seen:
                    problems.append(f"{_at(path, key)}: {here}: duplicate key (first at line "
                                    f"{seen[name] + 1})")
                else:
                    seen[name] = key.start_mark.line
                if name == "<<":
                    problems.append(f"{_at(path, key)}: {here}: merge keys ('<<') are not "
                                    "supported; write the keys out")
                    continue
                children.append((value, here))
        elif isinstance(node, yaml.SequenceNode):
            children = [(item, f"{prefix}.{i}") for i, item in enumerate(node.value)]
        elif isinstance(node, yaml.ScalarNode) and len(node.value) > 10_000:
            problems.append(f"{_at(path, node)}: {prefix}: a value of {len(node.value):,} "
                            "characters; no value in these files is that long")
        for child, here in reversed(children):
            stack.append((child, here, inside, depth + 1))
    return problems


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
        msg = "unknown key (check the spelling, and see the example designs in specs/)"
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
