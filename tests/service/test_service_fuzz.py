"""Fuzzing the API against its own OpenAPI description (schemathesis), for a bounded number of cases.

Every operation gets generated requests that fit the description and
requests that break it.  No answer may be a 500; every answer must be one
the description lists, with the content type and body shape it promises.
503 and 504 (busy, time limit) are allowed: they are the service protecting
itself, and are counted.  A few hundred requests in all (SLOW: about half a
minute; it runs in CI like every other test).
"""
from __future__ import annotations

import json
import math
from collections import Counter

import pytest

from service_helpers import Server

pytestmark = pytest.mark.slow  # fuzzing and load: minutes; CI runs them, `pytest -m "not slow"` skips them

schemathesis = pytest.importorskip("schemathesis")
from hypothesis import HealthCheck, Phase, given, settings  # noqa: E402
from hypothesis.errors import Unsatisfiable  # noqa: E402
from schemathesis import GenerationMode  # noqa: E402
from schemathesis.specs.openapi.checks import (content_type_conformance, response_schema_conformance,  # noqa: E402
                                               status_code_conformance)

EXAMPLES = {GenerationMode.POSITIVE: 25, GenerationMode.NEGATIVE: 15}
BODY_TYPES = ("application/yaml", "application/json", "application/toml")


def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf") if math.isinf(v) else repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v if x is not None) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{json.dumps(str(k))} = {_toml_value(x)}" for k, x in v.items() if x is not None) + "}"
    return json.dumps(str(v))


@schemathesis.serializer("application/toml")
def _toml(ctx, value):
    """A small TOML writer for generated bodies (TOML has no null: null values are left out)."""
    if not isinstance(value, dict):
        return b"= not a table"
    return "\n".join(f"{json.dumps(str(k))} = {_toml_value(v)}" for k, v in value.items() if v is not None).encode()


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    env = {"HEATSCREEN_CHECK_TIMEOUT": "20", "HEATSCREEN_MEMO_TIMEOUT": "30"}
    s = Server(tmp_path_factory.mktemp("fuzz"), env=env, name="fuzz")
    s.start()
    yield s
    s.stop()


def test_api_fuzzed_against_its_openapi_description(server):
    schema = schemathesis.openapi.from_url(server.url + "/openapi.json")
    statuses: Counter = Counter()
    server_errors: list[str] = []
    nonconforming: list[str] = []
    skipped: list[str] = []
    ops = [r.ok() for r in schema.get_all_operations()]
    assert len(ops) >= 15
    for op in ops:
        has_body = op.method.upper() == "POST"
        media = [m for m in op.get_request_payload_content_types() if m in BODY_TYPES] if has_body else [None]
        for mode, n in EXAMPLES.items():
            for media_type in media or [None]:
                kwargs = {"media_type": media_type} if media_type else {}
                strategy = op.as_strategy(generation_mode=mode, **kwargs)

                @settings(max_examples=n, deadline=None, database=None, derandomize=True,
                          phases=[Phase.explicit, Phase.generate], suppress_health_check=list(HealthCheck))
                @given(case=strategy)
                def run(case):
                    response = case.call(base_url=server.url, timeout=60)
                    code = response.status_code
                    statuses[(op.label, code)] += 1
                    if code >= 500 and code not in (503, 504):
                        server_errors.append(f"{op.label} [{mode.value}] -> {code}: {response.text[:300]}\n"
                                             f"{case.as_curl_command()}")
                        return
                    if code in (503, 504):
                        return
                    try:
                        case.validate_response(response, checks=[status_code_conformance, content_type_conformance,
                                                                 response_schema_conformance])
                    except (Exception, BaseExceptionGroup) as exc:  # noqa: BLE001 - collect them, report together
                        nonconforming.append(f"{op.label} [{mode.value}] -> {code}: {str(exc)[:400]}")

                try:
                    run()
                except Unsatisfiable:  # nothing to break: e.g. a negative case for an operation without inputs
                    skipped.append(f"{op.label} [{mode.value}]")
    total = sum(statuses.values())
    by_code = Counter()
    for (_, code), k in statuses.items():
        by_code[code] += k
    print(f"\nfuzzed {len(ops)} operations with {total} requests; answers by status: {dict(sorted(by_code.items()))}; "
          f"{len(skipped)} operation/mode pairs had nothing to generate")
    assert total >= 200
    assert not server_errors, "\n\n".join(server_errors[:10])
    assert not nonconforming, "\n".join(nonconforming[:15])
    with server.client() as c:
        assert c.get("/health").status_code == 200
