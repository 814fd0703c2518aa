"""Reading case files (YAML, TOML, JSON) into validated cases, with clear errors."""
from __future__ import annotations

import hashlib
import json
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from screening.case.schema import CaseError, CaseSpec, FieldProblem, validate_case_data
from screening.case.units import FINITE_EXPECTED

MAX_CASE_BYTES = 2_000_000
MAX_YAML_NODES = 100_000  # guards against alias ("billion laughs") expansion
MAX_EXPANDED_SIZE = 200_000  # values in the document once every alias is expanded


@dataclass(frozen=True)
class LoadedCase:
    spec: CaseSpec
    data: dict
    raw: bytes
    path: str | None

    @property
    def input_hash(self) -> str:
        return hashlib.sha256(self.raw).hexdigest()


def _yaml_loader():
    import yaml

    class UniqueKeyLoader(yaml.SafeLoader):
        """Safe YAML loader that rejects duplicate keys and runaway alias expansion."""

        nodes_seen = 0

        def construct_mapping(self, node, deep=False):
            keys = set()
            for key_node, _ in node.value:
                key = self.construct_object(key_node, deep=deep)
                if isinstance(key, (str, int, float)) and key in keys:
                    line = key_node.start_mark.line + 1
                    raise yaml.constructor.ConstructorError(
                        None, None, f"the key '{key}' is given twice (line {line})", key_node.start_mark)
                keys.add(key)
            return super().construct_mapping(node, deep=deep)

        def construct_object(self, node, deep=False):
            UniqueKeyLoader.nodes_seen += 1
            if UniqueKeyLoader.nodes_seen > MAX_YAML_NODES:
                raise yaml.constructor.ConstructorError(
                    None, None, f"the document expands to more than {MAX_YAML_NODES} nodes", node.start_mark)
            return super().construct_object(node, deep=deep)

    def construct_int(loader, node):
        try:
            return yaml.SafeLoader.construct_yaml_int(loader, node)
        except ValueError:  # more digits than Python converts: far beyond any float, so infinite
            return float("-inf") if node.value.lstrip().startswith("-") else float("inf")

    UniqueKeyLoader.add_constructor("tag:yaml.org,2002:int", construct_int)
    # YAML 1.1 turns "no"/"yes"/"on" into booleans and "1:30" into numbers; keep the standard resolver.
    UniqueKeyLoader.nodes_seen = 0
    return UniqueKeyLoader


def parse_text(raw: bytes, kind: str) -> Any:
    """Parse bytes as 'yaml', 'toml' or 'json'; raise CaseError with the line of a syntax error."""
    if len(raw) > MAX_CASE_BYTES:
        raise CaseError([FieldProblem("(file)", f"the file is larger than {MAX_CASE_BYTES} bytes")])
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise CaseError([FieldProblem("(file)", f"not UTF-8 text (byte {exc.start})")]) from None
    if kind == "json":
        return _parse_json(text)
    if kind == "toml":
        import tomllib

        try:
            return tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise CaseError([FieldProblem("(file)", f"TOML syntax error: {exc}{_toml_hint(text, str(exc))}")]) from None
        except ValueError as exc:  # e.g. an integer of more digits than Python converts
            reason = str(exc).split("; use ")[0]  # not Python's advice on its own limits
            raise CaseError([FieldProblem("(file)", f"TOML value not readable: {reason}; {FINITE_EXPECTED}")]) from None
    import yaml

    loader = _yaml_loader()(text)
    try:
        root = loader.get_single_node()
        problems = _yaml_key_problems(root) if root is not None else []
        if problems:
            raise CaseError(problems)
        data = loader.construct_document(root) if root is not None else None
        if expanded_size(data) > MAX_EXPANDED_SIZE:
            raise CaseError([FieldProblem("(file)", f"the document expands to more than {MAX_EXPANDED_SIZE} values "
                                                    f"through YAML aliases; write the values out instead")])
        return data
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        where = f" at line {mark.line + 1}, column {mark.column + 1}" if mark else ""
        problem = exc.problem or exc.context or "invalid YAML"
        raise CaseError([FieldProblem("(file)", f"YAML syntax error{where}: {problem}")]) from None
    except yaml.YAMLError as exc:
        raise CaseError([FieldProblem("(file)", f"YAML error: {exc}")]) from None
    except RecursionError:
        raise CaseError([FieldProblem("(file)", "YAML nesting is too deep")]) from None
    except ValueError as exc:  # a value the YAML types cannot hold, e.g. the date 2024-13-45
        raise CaseError([FieldProblem("(file)", f"YAML value not readable: {exc}")]) from None
    finally:
        loader.dispose()


# ------------------------------------------------------------------ keys given twice, merge keys

MAX_KEY_PROBLEMS = 20  # keys given twice (or merge keys) reported from one file at most
_ONCE = "give each key once (a later value would silently replace the earlier one)"


def _dotted(path: list) -> str:
    return ".".join(str(p) for p in path)


def _yaml_key_problems(root) -> list[FieldProblem]:
    """Keys given twice and merge keys ('<<') in a composed YAML document, with their path and line.

    Every node is visited once (an alias is a shared node), so this is linear in the document.
    """
    import yaml

    problems: list[FieldProblem] = []
    seen: set[int] = set()
    todo = [(root, [])]
    while todo and len(problems) < MAX_KEY_PROBLEMS:
        node, path = todo.pop()
        if id(node) in seen:
            continue
        seen.add(id(node))
        if isinstance(node, yaml.SequenceNode):
            todo.extend((child, path + [i]) for i, child in reversed(list(enumerate(node.value))))
        elif isinstance(node, yaml.MappingNode):
            keys: set = set()
            children = []
            for key_node, value_node in node.value:
                line = key_node.start_mark.line + 1
                if key_node.tag == "tag:yaml.org,2002:merge":
                    where = _dotted(path) or "the top level"
                    problems.append(FieldProblem("(file)", (
                        f"YAML merge key '<<' at {where} (line {line}) is not accepted: a key written beside it "
                        f"would silently override the merged value; write the fields out in full")))
                    continue
                name = key_node.value if isinstance(key_node, yaml.ScalarNode) else None
                if name is not None and (key_node.tag, name) in keys:
                    problems.append(FieldProblem("(file)", (
                        f"the key '{name}' is given twice: {_dotted(path + [name])} (line {line}); {_ONCE}")))
                keys.add((key_node.tag, name))
                children.append((value_node, path + [name if name is not None else "?"]))
            todo.extend(reversed(children))
    return problems


def _parse_json(text: str):
    """JSON with keys given twice refused (the standard library keeps the last silently)."""
    twice: list = []

    def pairs(items):
        obj = dict(items)
        if len(obj) != len(items):
            twice.append(True)
        return obj

    try:
        data = json.loads(text, object_pairs_hook=pairs, parse_int=_json_int)
    except json.JSONDecodeError as exc:
        raise CaseError([FieldProblem("(file)", f"JSON syntax error at line {exc.lineno}, column {exc.colno}: {exc.msg}")]) from None
    except RecursionError:
        raise CaseError([FieldProblem("(file)", "JSON nesting is too deep")]) from None
    if twice:
        raise CaseError([FieldProblem("(file)", f"the key '{key}' is given twice: {_dotted(path)} (line {line}); {_ONCE}")
                         for key, path, line in _json_keys_twice(text)[:MAX_KEY_PROBLEMS]])
    return data


def _json_int(digits: str):
    try:
        return int(digits)
    except ValueError:  # more digits than Python converts: far beyond any float, so infinite
        return float("-inf") if digits.startswith("-") else float("inf")


_JSON_TOKEN = re.compile(r'"(?:[^"\\]|\\.)*"|[{}\[\]:,]')


def _json_keys_twice(text: str) -> list[tuple[str, list, int]]:
    """(key, path, line) of every key given twice in a valid JSON text, by one scan of its tokens.

    Only strings and the structural characters matter: numbers, true, false and null are skipped.
    """
    out = []
    stack: list[dict] = []  # one frame per open object or array
    line, last = 1, 0
    for m in _JSON_TOKEN.finditer(text):
        tok = m.group()
        if tok == "{" or tok == "[":
            parent = stack[-1] if stack else None
            path = [] if parent is None else parent["path"] + [parent["key"] if parent["object"] else parent["index"]]
            stack.append({"object": tok == "{", "path": path, "key": None, "index": 0, "expect_key": True,
                          "keys": set()})
        elif tok == "}" or tok == "]":
            stack.pop()
        elif tok == ",":
            frame = stack[-1]
            frame["expect_key"] = True
            frame["index"] += 1
        elif tok == ":":
            stack[-1]["expect_key"] = False
        elif stack and stack[-1]["object"] and stack[-1]["expect_key"]:
            frame = stack[-1]
            key = json.loads(tok)
            if key in frame["keys"]:
                line += text.count("\n", last, m.start())
                last = m.start()
                out.append((key, frame["path"] + [key], line))
            frame["keys"].add(key)
            frame["key"] = key
    return out


def _toml_hint(text: str, message: str) -> str:
    """Name the key of TOML's 'Cannot overwrite a value (at line N, ...)' (a key given twice)."""
    m = re.match(r"Cannot overwrite a value \(at line (\d+)", message)
    if not m:
        return ""
    lines = text.splitlines()
    n = int(m.group(1))
    if not 1 <= n <= len(lines) or "=" not in lines[n - 1]:
        return ""
    key = lines[n - 1].split("=", 1)[0].strip()
    return f": the key '{key}' is given twice, or is set and then used as a table; {_ONCE}"


def expanded_size(obj, memo: dict | None = None) -> int:
    """Number of values in a parsed document with every shared (aliased) node counted each time it is used.

    Linear in the number of distinct nodes, so it is safe on an alias bomb.
    """
    if memo is None:
        memo = {}
    if not isinstance(obj, (dict, list)):
        return 1
    key = id(obj)
    if key in memo:
        return memo[key]
    memo[key] = 1  # a cycle counts once
    if isinstance(obj, dict):
        total = 1 + sum(expanded_size(k, memo) + expanded_size(v, memo) for k, v in obj.items())
    else:
        total = 1 + sum(expanded_size(v, memo) for v in obj)
    memo[key] = total
    return total


def kind_of(path: str | Path) -> str:
    suffix = Path(path).suffix.lower()
    return {".json": "json", ".toml": "toml"}.get(suffix, "yaml")


def load_case_bytes(raw: bytes, kind: str = "yaml", path: str | None = None) -> LoadedCase:
    data = parse_text(raw, kind)
    if data is None:
        raise CaseError([FieldProblem("(file)", "the file is empty; expected a case (id, contents, heat_loss, limits ...)")])
    spec = validate_case_data(data)
    return LoadedCase(spec, data, raw, path)


def load_case_file(path: str | Path) -> LoadedCase:
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise CaseError([FieldProblem("(file)", f"no such file: {p}")]) from None
    except IsADirectoryError:
        raise CaseError([FieldProblem("(file)", f"{p} is a folder, not a case file")]) from None
    except OSError as exc:
        raise CaseError([FieldProblem("(file)", f"cannot read {p}: {exc.strerror}")]) from None
    return load_case_bytes(raw, kind_of(p), str(p))
