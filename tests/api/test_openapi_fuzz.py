"""schemathesis over the service's OpenAPI spec, bounded: generated requests to every
operation (valid and invalid) give no server error and no answer outside the spec."""

from __future__ import annotations

import collections
import json

import pytest

schemathesis = pytest.importorskip("schemathesis")
from hypothesis import HealthCheck, settings  # noqa: E402
from schemathesis.checks import (  # noqa: E402
    content_type_conformance,
    not_a_server_error,
    response_schema_conformance,
    status_code_conformance,
)
from tripsim_api.app import create_app  # noqa: E402
from tripsim_api.settings import Settings  # noqa: E402

from tests.api.conftest import ARTIFACTS  # noqa: E402

CHECKS = [not_a_server_error, status_code_conformance, content_type_conformance,
          response_schema_conformance]
#: Examples per operation: bounded, so the whole run takes well under a minute.
EXAMPLES = 12

_SENT: collections.Counter = collections.Counter()


@pytest.fixture(scope="module", autouse=True)
def _tally():
    """Leave the number of requests sent, by status, for the figures in the notes."""
    yield
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (ARTIFACTS / "schemathesis.json").write_text(json.dumps(
        {"requests": sum(_SENT.values()), "by_status": dict(sorted(_SENT.items()))}))


# The spec alone (no store is opened); requests go to the session's running service.
schema = schemathesis.openapi.from_dict(
    create_app(Settings(db_url="sqlite:///unused.sqlite3")).openapi())


@schema.parametrize()
@settings(max_examples=EXAMPLES, deadline=None, derandomize=True, database=None,
          suppress_health_check=list(HealthCheck))
def test_no_server_errors_and_answers_as_documented(case, client, demo):
    kwargs = case.as_transport_kwargs(base_url="http://testserver")
    if kwargs.get("files"):
        kwargs["files"] = _bytes_files(kwargs["files"])
    response = client.request(**{k: v for k, v in kwargs.items() if k in _HTTPX and v})
    _SENT[response.status_code] += 1
    response.request.read()  # a multipart body is a stream: the checks read it again
    case.validate_response(response, checks=CHECKS)


def _bytes_files(files):
    """Multipart parts as httpx sends them (generated parts may hold numbers)."""
    items = files.items() if isinstance(files, dict) else files
    out = []
    for field, value in items:
        if isinstance(value, tuple):
            name, content, *rest = value
            content = content if isinstance(content, bytes) else str(content).encode()
            value = (name, content, *rest)
        elif not isinstance(value, bytes):
            value = str(value).encode()
        out.append((field, value))
    return out


_HTTPX = {"method", "url", "params", "headers", "cookies", "content", "data", "files", "json"}
