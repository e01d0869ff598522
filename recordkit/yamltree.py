"""Safe YAML reading that keeps line numbers and refuses what records never need.

PyYAML's `safe_load` forgets where values came from, silently keeps the last of
two duplicate keys and expands aliases without limit ("billion laughs"). Here
we only *compose* the document (no objects are built from tags) and walk the
node graph ourselves, so every mapping and list remembers its lines, duplicate
keys and aliases become problems, and dates stay as the text the user wrote
(the model parses them with its own, stricter rules).
"""
from __future__ import annotations

import re
from typing import Any

import yaml

from .errors import Problems, Source

try:  # the C parser is much faster on big log files; same behaviour
    _Loader = yaml.CSafeLoader
except AttributeError:  # pragma: no cover - depends on how PyYAML was built
    _Loader = yaml.SafeLoader

# A hand-kept record file is far smaller. Composing YAML takes about 60 times the file's size in memory
# (measured: a 16 MB event log peaks near 1 GB), so a YAML file is limited to 16 MB; CSV logs, which
# take little more than their size, may reach 64 MB (csvlog.MAX_CSV_BYTES).
MAX_FILE_BYTES = 16 * 1024 * 1024

_MAP = "tag:yaml.org,2002:map"
_SEQ = "tag:yaml.org,2002:seq"
_TIMESTAMP = "tag:yaml.org,2002:timestamp"
_SCALAR_TAGS = {
    "tag:yaml.org,2002:str",
    "tag:yaml.org,2002:int",
    "tag:yaml.org,2002:float",
    "tag:yaml.org,2002:bool",
    "tag:yaml.org,2002:null",
}
_constructor = yaml.constructor.SafeConstructor()
_INT = "tag:yaml.org,2002:int"
_FLOAT = "tag:yaml.org,2002:float"
_BOOL = "tag:yaml.org,2002:bool"
_STR = "tag:yaml.org,2002:str"
_NUMBER_STARTS = frozenset("0123456789+-.")  # 1.1 reads 1e5 and 0o17 as text; 1.2 as numbers
# YAML 1.2 core schema: PyYAML resolves plain scalars by YAML 1.1, where 010 is octal 8, 12:30 is 750
# (base 60), 1_000 is 1000 and yes/on are true. Records read plain scalars the 1.2 way instead.
_CORE_DECIMAL = re.compile(r"[-+]?[0-9]+")
_CORE_OCTAL = re.compile(r"0o[0-7]+")
_CORE_HEX = re.compile(r"0x[0-9a-fA-F]+")
_CORE_FLOAT = re.compile(r"[-+]?(\.[0-9]+|[0-9]+(\.[0-9]*)?)([eE][-+]?[0-9]+)?")
_CORE_SPECIAL = {".inf": float("inf"), "+.inf": float("inf"), "-.inf": float("-inf"), ".nan": float("nan")}
_CORE_BOOL = {"true": True, "True": True, "TRUE": True, "false": False, "False": False, "FALSE": False}


class WrittenInt(int):
    """A number as YAML 1.2 reads it, remembering the text it was written as (for text fields)."""

    written: str


class WrittenFloat(float):
    written: str


def core_scalar(text: str):
    """A plain scalar that YAML 1.1 took for a number or a boolean, as YAML 1.2 core reads it."""
    number = None
    if _CORE_DECIMAL.fullmatch(text):
        number = WrittenInt(int(text, 10))
    elif _CORE_OCTAL.fullmatch(text) or _CORE_HEX.fullmatch(text):
        number = WrittenInt(int(text[2:], 8 if text[1] == "o" else 16))
    elif _CORE_FLOAT.fullmatch(text) or text.lower() in _CORE_SPECIAL:
        number = WrittenFloat(_CORE_SPECIAL.get(text.lower(), None) if text.lower() in _CORE_SPECIAL
                              else float(text))
    elif text in _CORE_BOOL:
        return _CORE_BOOL[text]
    else:
        return text
    number.written = text
    return number


class YMap(dict):
    """A mapping that knows its own line and the line of each key and value."""

    line: int
    key_lines: dict
    value_lines: dict

    def line_of(self, key: str) -> int:
        return self.value_lines.get(key, self.key_lines.get(key, self.line))


class YList(list):
    """A list that knows its own line and the line of each item."""

    line: int
    item_lines: list


# Characters a YAML reader refuses raw (DEL, C1 controls, non-characters) or reads as a line break inside a
# quoted string (NEL, U+2028, U+2029): written as escapes so the text reads back exactly.
_UNWRITABLE = re.compile("[\x7f-\x9f\u2028\u2029\ufffe\uffff]")


def quoted(text: str) -> str:
    """Text as a one-line YAML double-quoted string that reads back as exactly this text. A JSON string is
    a valid YAML double-quoted string; the characters YAML reads differently are escaped as well."""
    import json

    return _UNWRITABLE.sub(lambda m: f"\\u{ord(m.group()):04x}", json.dumps(text, ensure_ascii=False))


def plain(value: Any) -> Any:
    """A located tree as plain dicts and lists (for comparing what two texts hold)."""
    if isinstance(value, dict):
        return {k: plain(v) for k, v in value.items()}
    if isinstance(value, list):
        return [plain(v) for v in value]
    return value


def read_yaml(data: bytes, path: str, problems: Problems) -> Any:
    """Parse one file's bytes. Returns the located tree, or None after adding problems."""
    if len(data) > MAX_FILE_BYTES:
        problems.add(Source(path, 1), f"file is {len(data):,} bytes; record files are limited to "
                     f"{MAX_FILE_BYTES:,} bytes (split it, e.g. one log file per year)")
        return None
    text = _decode(data, path, problems)
    if text is None:
        return None
    try:
        node = yaml.compose(text, Loader=_Loader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark else 1
        problems.add(Source(path, line), _explain_yaml_error(exc, text))
        return None
    except yaml.reader.ReaderError as exc:
        line = text[: exc.position].count("\n") + 1 if isinstance(exc.position, int) else 1
        code = exc.character if isinstance(exc.character, int) else ord(str(exc.character)[:1] or "\0")
        problems.add(Source(path, line), f"the character U+{code:04X} is not allowed in a record file "
                     "(a control character?); remove it")
        return None
    except yaml.YAMLError as exc:
        problems.add(Source(path, 1), "cannot read YAML: " + " ".join(str(exc).split()))
        return None
    if node is None:
        return None
    return _Walker(path, problems).walk(node)


def _decode(data: bytes, path: str, problems: Problems) -> str | None:
    try:
        return data.decode("utf-8-sig")  # a byte-order mark from a Windows editor is fine
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        problems.add(Source(path, line), f"not UTF-8 text (byte 0x{data[exc.start]:02x} at offset "
                     f"{exc.start}); save the file as UTF-8")
        return None


def _explain_yaml_error(exc: yaml.MarkedYAMLError, text: str) -> str:
    problem = exc.problem or str(exc)
    mark = exc.problem_mark
    lines = text.splitlines()
    at_mark = lines[mark.line][: mark.column + 1] if mark and mark.line < len(lines) else ""
    if "\t" in at_mark or "\t" in problem:
        return "a tab character where YAML needs spaces; indent with spaces only"
    if exc.context and "single document" in exc.context:
        return "only one YAML document per file (remove the extra '---')"
    context = f" ({exc.context})" if exc.context else ""
    return " ".join(f"YAML syntax: {problem}{context}".split())  # one line, whatever the parser said


class _Walker:
    def __init__(self, path: str, problems: Problems):
        self.path = path
        self.problems = problems
        self.seen: set[int] = set()

    def _problem(self, node: yaml.Node, message: str) -> None:
        self.problems.add(Source(self.path, node.start_mark.line + 1), message)

    def walk(self, node: yaml.Node) -> Any:
        # An alias makes the composer hand back the same node object twice.
        # Records never need aliases, and refusing them here stops alias bombs
        # before anything is expanded.
        if id(node) in self.seen:
            self._problem(node, "YAML anchors and aliases (&name / *name) are not allowed in records; "
                          "write the value out")
            return None
        self.seen.add(id(node))
        if isinstance(node, yaml.MappingNode):
            return self._mapping(node)
        if isinstance(node, yaml.SequenceNode):
            return self._sequence(node)
        return self._scalar(node)

    def _mapping(self, node: yaml.MappingNode) -> YMap | None:
        if node.tag != _MAP:
            self._problem(node, f"YAML tag {node.tag!r} is not allowed in records")
            return None
        result = YMap()
        result.line = node.start_mark.line + 1
        result.key_lines, result.value_lines = {}, {}
        for key_node, value_node in node.value:
            if not isinstance(key_node, yaml.ScalarNode) or key_node.tag == "tag:yaml.org,2002:merge":
                self._problem(key_node, "keys must be plain words (no '<<' merges or complex keys)")
                continue
            key = key_node.value
            if key in result.key_lines:
                self._problem(key_node, f"duplicate key {key!r} (first at line {result.key_lines[key]})")
                continue
            result.key_lines[key] = key_node.start_mark.line + 1
            result.value_lines[key] = value_node.start_mark.line + 1
            result[key] = self.walk(value_node)
        return result

    def _sequence(self, node: yaml.SequenceNode) -> YList | None:
        if node.tag != _SEQ:
            self._problem(node, f"YAML tag {node.tag!r} is not allowed in records")
            return None
        result = YList(self.walk(item) for item in node.value)
        result.line = node.start_mark.line + 1
        result.item_lines = [item.start_mark.line + 1 for item in node.value]
        return result

    def _scalar(self, node: yaml.ScalarNode) -> Any:
        if node.tag == _TIMESTAMP:
            return node.value  # keep dates as written; the model parses them strictly
        if not node.style and (node.tag in (_INT, _FLOAT, _BOOL)  # plain: "" from the C parser, None from Python
                               or (node.tag == _STR and node.value[:1] in _NUMBER_STARTS)):
            return core_scalar(node.value)
        if node.tag not in _SCALAR_TAGS:
            self._problem(node, f"YAML tag {node.tag!r} is not allowed in records")
            return None
        try:
            # Call the tag's constructor directly: construct_object() would cache
            # every node in a shared dict and keep whole files alive.
            return _constructor.yaml_constructors[node.tag](_constructor, node)
        except (yaml.YAMLError, ValueError) as exc:
            self._problem(node, f"cannot read value {node.value!r}: {exc}")
            return None
