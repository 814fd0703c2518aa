"""Reading case files (YAML, TOML, JSON) into validated cases, with clear errors."""
from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from screening.case.schema import CaseError, CaseSpec, FieldProblem, validate_case_data

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
        try:
            return json.loads(text)
        except json.JSONDecodeError as exc:
            raise CaseError([FieldProblem("(file)", f"JSON syntax error at line {exc.lineno}, column {exc.colno}: {exc.msg}")]) from None
    if kind == "toml":
        import tomllib

        try:
            return tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise CaseError([FieldProblem("(file)", f"TOML syntax error: {exc}")]) from None
    import yaml

    loader = _yaml_loader()
    try:
        data = yaml.load(text, Loader=loader)  # noqa: S506 - a SafeLoader subclass
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
