"""schemathesis against the app's own OpenAPI document: no server error, no response off the schema."""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import pytest
import schemathesis
from hypothesis import HealthCheck, given, settings
from pydantic import SecretStr
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (
    content_type_conformance,
    response_schema_conformance,
    status_code_conformance,
)

from service.app import create_app
from service.settings import Settings
from service.state import ServiceState
from widen.decisions.sqlite import SqliteDecisionStore
from widen.model.store import Store

REVIEW = "tollbridge-review-schema"


@pytest.fixture(scope="module")
def api_schema(trained_store: Path, tmp_path_factory: pytest.TempPathFactory) -> tuple[schemathesis.BaseSchema, Path]:
    # A private copy: with the review token the generated requests really write decisions.
    store = tmp_path_factory.mktemp("schema") / "store"
    shutil.copytree(trained_store, store)
    settings_ = Settings(
        store=store, access_log=False, admin_token=SecretStr("tollbridge-admin"), review_token=SecretStr(REVIEW)
    )
    state = ServiceState(settings_)
    state.check()
    state.check_decisions()
    app = create_app(settings_, state, watch=False)
    return schemathesis.openapi.from_asgi("/openapi.json", app), store


def test_api_conforms_to_its_own_schema(api_schema: tuple[schemathesis.BaseSchema, Path]) -> None:
    schema, store = api_schema
    # Each operation of the document gets generated requests (schemathesis over hypothesis); the
    # checks named by the issue: no 5xx, and every response, errors too, matches the document.
    checks = [not_a_server_error, status_code_conformance, content_type_conformance, response_schema_conformance]
    operations = [result.ok() for result in schema.get_all_operations()]  # type: ignore[union-attr]
    assert {op.path for op in operations} >= {
        "/v1/expand",
        "/v1/expand/batch",
        "/v1/model",
        "/readyz",
        "/v1/decisions",
        "/v1/decisions/{decision_id}",
        "/v1/decisions/import",
        "/v1/decisions/export",
    }
    for operation in operations:

        @given(case=operation.as_strategy())
        @settings(max_examples=40, deadline=None, suppress_health_check=list(HealthCheck), database=None)
        def run(case: schemathesis.Case[Any]) -> None:
            case.call_and_validate(headers={"Authorization": f"Bearer {REVIEW}"}, checks=checks)

        run()
    # The write paths ran for real: generated decisions were recorded (and some withdrawn).
    assert SqliteDecisionStore(Store(store).decisions_path).audit()
