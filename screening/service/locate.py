"""Map a problem's field path (``heat_sources.1.power``) to a line of the case text.

Used by the web page to mark the lines a problem concerns.  YAML and JSON are
composed (not constructed) with PyYAML's safe composer, which keeps each
node's position; aliases are shared nodes and are walked once.  A syntax error
names its line in the message.  TOML gets line numbers for syntax errors only.
"""
from __future__ import annotations

import re

_LINE_IN_MESSAGE = re.compile(r"\bline (\d+)\b")
MAX_TEXT = 2_000_000


def _compose(text: str):
    import yaml

    try:
        return yaml.compose(text, Loader=yaml.SafeLoader)
    except (yaml.YAMLError, RecursionError, ValueError):
        return None


def _find(node, parts: list[str]):
    """Deepest node along ``parts``: (line, complete) with 1-based line."""
    import yaml

    line = node.start_mark.line + 1
    for part in parts:
        nxt = None
        if isinstance(node, yaml.MappingNode):
            for key, value in node.value:
                if isinstance(key, yaml.ScalarNode) and key.value == part:
                    nxt = (key, value)
                    break
        elif isinstance(node, yaml.SequenceNode) and part.isdigit():
            i = int(part)
            if i < len(node.value):
                nxt = (node.value[i], node.value[i])
        if nxt is None:
            return line, False
        key, node = nxt
        line = key.start_mark.line + 1
    return line, True


def field_lines(raw: bytes, kind: str, problems: list[tuple[str, str]]) -> dict[str, int]:
    """{field: line} for the problems that can be placed; others are left out."""
    out: dict[str, int] = {}
    for field, message in problems:
        if field.startswith("("):
            m = _LINE_IN_MESSAGE.search(message)
            if m:
                out[field] = int(m.group(1))
    if kind not in ("yaml", "json") or len(raw) > MAX_TEXT:
        return out
    todo = [f for f, _ in problems if not f.startswith("(") and f not in out]
    if not todo:
        return out
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return out
    root = _compose(text)
    if root is None:
        return out
    for field in todo:
        out[field] = _find(root, field.split("."))[0]
    return out
