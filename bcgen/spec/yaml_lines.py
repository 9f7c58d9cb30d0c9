"""YAML with line and column: compose a spec into nodes and read scalars strictly.

The spec is parsed with :func:`yaml.compose`, which keeps every node's start
mark, and never with :func:`yaml.safe_load`: the values are typed here, by the
rules below, so that each error can name ``file:line:column`` and so that no
value is silently coerced.

Plain (unquoted) scalars are read with the YAML 1.2 core schema, and the
YAML 1.1 forms on which readers disagree are refused with a hint instead of
being guessed:

===========================  ================================================
plain scalar                 read as
===========================  ================================================
``true``, ``false``          boolean (also ``True``/``TRUE`` ...)
``null``, ``~``, empty       null
``42``, ``-7``               integer
``1.5``, ``1e-6``, ``.5``    float (``.inf``/``.nan`` are floats too)
``yes``, ``no``, ``on``,     refused where a string or a boolean is expected:
``off``, ``y``, ``n``        YAML 1.1 readers take them for booleans
``012``, ``1_000``, ``0x1f``  refused where a number is expected: YAML 1.1
                             reads them as octal/grouped/hex integers
anything else                string
===========================  ================================================

Quoted and block scalars are always strings. Explicit tags other than
``!!str``, merge keys (``<<``) and duplicate keys are refused.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Literal

import yaml

from bcgen.errors import SpecError

ScalarKind = Literal["null", "bool", "int", "float", "str", "yaml11_bool", "yaml11_number"]

_NULL = re.compile(r"^(?:~|null|Null|NULL|)$")
_BOOL = re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$")
_YAML11_BOOL = re.compile(r"^(?:y|Y|yes|Yes|YES|n|N|no|No|NO|on|On|ON|off|Off|OFF)$")
_INT = re.compile(r"^[-+]?(?:0|[1-9][0-9]*)$")
_FLOAT = re.compile(r"^[-+]?(?:\.[0-9]+|[0-9]+(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?$")
_SPECIAL_FLOAT = re.compile(r"^(?:[-+]?\.(?:inf|Inf|INF)|\.(?:nan|NaN|NAN))$")
# Forms that YAML 1.1 reads as numbers but YAML 1.2 does not, or reads differently.
_YAML11_NUMBER = re.compile(
    r"^[-+]?(?:0[0-7]+|0b[01_]+|0x[0-9a-fA-F_]+|0o[0-7]+|[0-9][0-9_]*_[0-9_]*"
    r"|[1-9][0-9_]*(?::[0-5]?[0-9])+(?:\.[0-9_]*)?)$"
)

_STR_TAG = "tag:yaml.org,2002:str"
_MAP_TAG = "tag:yaml.org,2002:map"
_SEQ_TAG = "tag:yaml.org,2002:seq"
_MERGE_TAG = "tag:yaml.org,2002:merge"


@dataclass(frozen=True)
class Scalar:
    """A scalar read from the spec: its kind, Python value and source text."""

    kind: ScalarKind
    value: object
    text: str
    quoted: bool


def error_at(filename: str, node: yaml.Node | None, key_path: str, message: str) -> SpecError:
    """Make a :class:`SpecError` whose one-line message starts ``file:line:column: key:``."""
    where = one_line(filename)
    if node is not None:
        where = f"{filename}:{node.start_mark.line + 1}:{node.start_mark.column + 1}"
    prefix = f"{key_path}: " if key_path else ""
    return SpecError(one_line(f"{where}: {prefix}{message}"))


_LINE_BREAKS = re.compile("[\n\r\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029]")


def one_line(text: str) -> str:
    """Escape every line-break character, so that a message stays on one line."""
    return _LINE_BREAKS.sub(lambda m: repr(m.group())[1:-1], str(text))


def compose(text: str, filename: str) -> yaml.Node | None:
    """Compose YAML text into a node tree, turning every YAML error into a :class:`SpecError`.

    Parameters
    ----------
    text : str
        The spec text.
    filename : str
        Name used in messages (``<string>`` for text not read from a file).

    Returns
    -------
    yaml.Node or None
        The root node, or None for an empty document.
    """
    try:
        return yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.MarkedYAMLError as exc:
        raise SpecError(one_line(_syntax_message(exc, filename))) from None
    except yaml.reader.ReaderError as exc:
        line, column = _position(text, exc.position)
        code = exc.character if isinstance(exc.character, int) else ord(exc.character)
        raise SpecError(
            one_line(
                f"{filename}:{line}:{column}: YAML syntax error: character U+{code:04X} is not "
                "allowed in a YAML file"
            )
        ) from None
    except yaml.YAMLError as exc:
        raise error_at(filename, None, "", f"YAML syntax error: {_clean(str(exc))}") from None
    except RecursionError:
        raise error_at(filename, None, "", "YAML syntax error: nesting too deep") from None


def _syntax_message(exc: yaml.MarkedYAMLError, filename: str) -> str:
    mark = exc.problem_mark or exc.context_mark
    where = f"{filename}:{mark.line + 1}:{mark.column + 1}" if mark else filename
    if exc.context and "expected a single document" in exc.context:
        return (
            f"{where}: YAML syntax error: a spec is one YAML document; found a second one "
            "(remove the '---')"
        )
    problem = _clean(exc.problem or exc.context or "invalid YAML")
    if "'\\t'" in problem:
        problem += " (indent with spaces, not tabs)"
    context = exc.context_mark
    if (
        exc.context
        and exc.problem
        and context is not None
        and mark is not None
        and context.line != mark.line
    ):
        problem += (
            f" ({_clean(exc.context)} at line {context.line + 1}, column {context.column + 1})"
        )
    return f"{where}: YAML syntax error: {problem}"


def _show_tag(tag: str) -> str:
    return "!!" + tag[len("tag:yaml.org,2002:") :] if tag.startswith("tag:yaml.org,2002:") else tag


def _clean(problem: str) -> str:
    return " ".join(problem.split())


def _position(text: str, index: int) -> tuple[int, int]:
    before = text[:index]
    line = before.count("\n") + 1
    column = index - (before.rfind("\n") + 1) + 1
    return line, column


def _implicit_tag(value: str) -> str:
    return yaml.SafeLoader.resolve(yaml.SafeLoader, yaml.ScalarNode, value, (True, False))


def read_scalar(node: yaml.ScalarNode, filename: str, key_path: str) -> Scalar:
    """Type one scalar node by the rules in the module docstring."""
    text = node.value
    quoted = node.style is not None
    if quoted:
        if node.tag != _STR_TAG:
            raise error_at(
                filename,
                node,
                key_path,
                f"explicit YAML tag {_show_tag(node.tag)!r} is not supported in a spec; remove it",
            )
        return Scalar("str", text, text, True)
    if node.tag != _implicit_tag(text):
        if node.tag == _STR_TAG:  # an explicit !!str
            return Scalar("str", text, text, True)
        raise error_at(
            filename,
            node,
            key_path,
            f"explicit YAML tag {_show_tag(node.tag)!r} is not supported in a spec; remove it",
        )
    if _NULL.match(text):
        return Scalar("null", None, text, False)
    if _BOOL.match(text):
        return Scalar("bool", text.lower() == "true", text, False)
    if _YAML11_BOOL.match(text):
        return Scalar("yaml11_bool", text, text, False)
    if _YAML11_NUMBER.match(text):
        return Scalar("yaml11_number", text, text, False)
    if _INT.match(text):
        return Scalar("int", int(text), text, False)
    if _FLOAT.match(text) or _SPECIAL_FLOAT.match(text):
        return Scalar("float", _to_float(text), text, False)
    return Scalar("str", text, text, False)


def _to_float(text: str) -> float:
    lowered = text.lower()
    if "inf" in lowered or "nan" in lowered:
        return float(lowered.replace(".", ""))
    return float(text)


def describe(node: yaml.Node, scalar: Scalar | None = None) -> str:
    """Describe what a node holds, for 'expected X, got Y' messages."""
    if isinstance(node, yaml.MappingNode):
        return "a mapping"
    if isinstance(node, yaml.SequenceNode):
        return "a list"
    if scalar is None:
        return "a value"
    if scalar.kind == "null":
        return "nothing (null)"
    if scalar.kind == "bool":
        return f"the boolean {scalar.text}"
    if scalar.kind in ("int", "float"):
        return f"the number {scalar.text}"
    return f"the string {scalar.text!r}"


def decimals_of(text: str) -> int:
    """Count the digits after the decimal point as written (``0.018682`` → 6, ``24`` → 0)."""
    mantissa, _, exponent = text.lower().partition("e")
    _, _, fraction = mantissa.partition(".")
    places = len(fraction) - (int(exponent) if exponent else 0)
    return max(places, 0)


def mapping_items(node: yaml.MappingNode, filename: str, key_path: str):
    """Yield ``(key, key_node, value_node)`` of a mapping; refuse odd keys and duplicates."""
    seen: dict[str, yaml.Node] = {}
    for key_node, value_node in node.value:
        if key_node.tag == _MERGE_TAG:
            raise error_at(
                filename,
                key_node,
                key_path,
                "merge keys ('<<') are not supported in a spec; write the keys out",
            )
        if not isinstance(key_node, yaml.ScalarNode):
            raise error_at(
                filename,
                key_node,
                key_path,
                f"a key must be a plain name, not {describe(key_node)}",
            )
        scalar = read_scalar(key_node, filename, key_path)
        if scalar.kind != "str" and not (scalar.kind == "yaml11_bool"):
            raise error_at(
                filename,
                key_node,
                key_path,
                f"a key must be a name, not {describe(key_node, scalar)}",
            )
        key = scalar.text
        if key in seen:
            first = seen[key].start_mark.line + 1
            raise error_at(
                filename,
                key_node,
                join(key_path, key),
                f"duplicate key (first given on line {first})",
            )
        seen[key] = key_node
        yield key, key_node, value_node


def join(key_path: str, key: str | int) -> str:
    """Extend a dotted key path by a key or a list index (``a.b[2]``)."""
    if isinstance(key, int):
        return f"{key_path}[{key}]"
    if not re.fullmatch(r"[A-Za-z0-9_-]+", key):
        key = repr(key)
    return f"{key_path}.{key}" if key_path else key


def locate(root: yaml.Node | None, key_path: str) -> yaml.Node | None:
    """Find the node a dotted key path points at, or its nearest existing parent."""
    node = root
    for part in re.findall(r"[^.\[\]]+|\[\d+\]", key_path):
        if part.startswith("["):
            index = int(part[1:-1])
            if isinstance(node, yaml.SequenceNode) and index < len(node.value):
                node = node.value[index]
                continue
            return node
        if not isinstance(node, yaml.MappingNode):
            return node
        for key_node, value_node in node.value:
            if isinstance(key_node, yaml.ScalarNode) and key_node.value == part:
                node = value_node
                break
        else:
            return node
    return node
