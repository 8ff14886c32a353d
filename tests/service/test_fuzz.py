"""Every endpoint fuzzed from the OpenAPI schema with schemathesis (property-based):
valid and invalid requests, with a write token; no answer is a 5xx, and every answer —
success or error — matches the schema its operation documents (status and body).

The refresh job is replaced by a stub here (a process per request would make the run
slow; tests/service/test_jobs.py runs real ones). The example count is kept small and
fixed (derandomized) so that CI stays fast and repeatable.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
import schemathesis
from hypothesis import HealthCheck, given, settings
from schemathesis import GenerationMode
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import response_schema_conformance, status_code_conformance
from tests.service.conftest import Service, copy_workspace, start

from talkthemes.service.jobs import Job, Jobs

#: Examples per operation (and generation mode).
EXAMPLES = 25


@pytest.fixture(scope="module")
def fuzzed(published_root: Path, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Service]:
    ws = copy_workspace(published_root, tmp_path_factory.mktemp("fuzz") / "ws")
    patch = pytest.MonkeyPatch()
    patch.setattr(Jobs, "start_refresh", lambda self, options: Job("stub", "refresh", options))
    try:
        yield from start(ws)
    finally:
        patch.undo()


@pytest.mark.parametrize("mode", [GenerationMode.POSITIVE, GenerationMode.NEGATIVE])
def test_no_5xx_and_every_answer_matches_the_schema(fuzzed: Service, mode: GenerationMode) -> None:
    schema = schemathesis.openapi.from_asgi("/openapi.json", fuzzed.client.app)
    operations = [result.ok() for result in schema.get_all_operations()]
    assert len(operations) == 10  # every endpoint of /v1
    headers = fuzzed.headers("write")
    checks = [not_a_server_error, response_schema_conformance, status_code_conformance]
    for operation in operations:
        inputs = operation.definition.raw
        if mode == GenerationMode.NEGATIVE and not (
            inputs.get("parameters") or inputs.get("requestBody")
        ):
            continue  # nothing to get wrong (GET /v1/health)

        @given(case=operation.as_strategy(generation_mode=mode))
        @settings(
            max_examples=EXAMPLES,
            derandomize=True,
            deadline=None,
            database=None,
            suppress_health_check=list(HealthCheck),
        )
        def run(case: schemathesis.Case) -> None:
            case.call_and_validate(headers=headers, checks=checks)

        run()
