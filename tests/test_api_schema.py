"""schemathesis against the app's own OpenAPI document: no server error, no response off the schema."""

from __future__ import annotations

from pathlib import Path

import pytest
import schemathesis
from hypothesis import HealthCheck, given, settings
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (
    content_type_conformance,
    response_schema_conformance,
    status_code_conformance,
)

from service.app import create_app
from service.lifecycle import ModelHolder
from service.settings import Settings
from training.bundle import Store


@pytest.fixture(scope="module")
def api_schema(trained_store: Path) -> schemathesis.BaseSchema:
    holder = ModelHolder(Store(trained_store))
    holder.check()
    holder.check_decisions()
    app = create_app(
        Settings(store=trained_store, access_log=False, admin_token="tollbridge-admin"), holder, watch=False
    )
    return schemathesis.openapi.from_asgi("/openapi.json", app)


def test_api_conforms_to_its_own_schema(api_schema: schemathesis.BaseSchema) -> None:
    # Each operation of the document gets generated requests (schemathesis over hypothesis); the
    # checks named by the issue: no 5xx, and every response, errors too, matches the document.
    checks = [not_a_server_error, status_code_conformance, content_type_conformance, response_schema_conformance]
    operations = [result.ok() for result in api_schema.get_all_operations()]
    assert {op.path for op in operations} >= {"/v1/expand", "/v1/expand/batch", "/v1/model", "/readyz"}
    for operation in operations:

        @given(case=operation.as_strategy())
        @settings(max_examples=40, deadline=None, suppress_health_check=list(HealthCheck), database=None)
        def run(case: schemathesis.Case) -> None:
            case.call_and_validate(checks=checks)

        run()
