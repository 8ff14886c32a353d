"""POST /v1/refresh runs a real refresh in its own process: the job reports its progress
and result, the new version becomes current whole, labels carry over; one refresh at a
time; a refresh killed half-way leaves the previous version current."""

from __future__ import annotations

import os
import signal
import time
from typing import Any

import pytest
from tests.service.conftest import Service, error_of

from talkthemes.demo.records import DemoFiles
from talkthemes.service.jobs import Job, Jobs


def wait_for(service: Service, job_id: str, seconds: float = 120) -> dict[str, Any]:
    """The job once finished (polling its endpoint)."""
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        job = service.get(f"/v1/jobs/{job_id}").json()
        if job["state"] in ("done", "failed"):
            return job
        time.sleep(0.2)
    raise AssertionError(f"job {job_id} did not finish in {seconds} s")


@pytest.mark.slow
def test_a_refresh_job_publishes_the_next_version(service: Service, demo: DemoFiles) -> None:
    for theme_id in range(1, 5):
        label = {"theme_id": theme_id, "label": f"Label {theme_id}"}
        assert service.post("/v1/labels", scope="write", json=label).is_success
    service.ws.ingest(demo.inbox)  # the held-back month has arrived
    res = service.post("/v1/refresh", scope="write", json={})
    assert res.status_code == 202, res.text
    job = res.json()
    assert res.headers["Location"] == f"/v1/jobs/{job['job_id']}"
    assert job["kind"] == "refresh" and job["state"] in ("starting", "running")
    second = service.post("/v1/refresh", scope="write", json={})
    assert second.status_code == 409 and job["job_id"] in str(error_of(second)["message"])

    done = wait_for(service, job["job_id"])
    assert done["state"] == "done", done
    assert done["result"]["status"] == "published" and done["result"]["version"] == 2
    assert done["progress"]["total"] > 0 and done["progress"]["done"] == done["progress"]["total"]
    assert done["error"] is None and done["started_at"] and done["finished_at"]
    versions = service.get("/v1/versions").json()
    assert versions["current"] == 2
    assert versions["versions"][-1]["made_by"] == "refresh"
    assert versions["versions"][-1]["previous_version"] == 1
    themes = service.get("/v1/themes").json()
    assert themes["version"] == 2
    carried = [t for t in themes["themes"] if t["status"] == "carried"]
    assert carried  # a month more of the same utility's calls keeps some themes
    assert all(t["name"] == f"Label {t['theme_id']}" for t in carried)  # and their labels
    # nothing new: the next job is done at once and changes nothing
    again = wait_for(service, service.post("/v1/refresh", scope="write").json()["job_id"])
    assert again["state"] == "done" and again["result"]["status"] == "nothing_new"
    assert service.get("/v1/versions").json()["current"] == 2


@pytest.mark.slow
def test_a_killed_refresh_fails_and_leaves_the_version_current(
    service: Service, demo: DemoFiles, monkeypatch: pytest.MonkeyPatch
) -> None:
    service.ws.ingest(demo.inbox)
    monkeypatch.setenv("TALKTHEMES_TEST_PAUSE_AT", "fitted")
    monkeypatch.setenv("TALKTHEMES_TEST_PAUSE_SECONDS", "60")
    job = service.post("/v1/refresh", scope="write", json={}).json()
    jobs: Jobs = service.client.app.state.talkthemes.jobs  # type: ignore[attr-defined]
    end = time.monotonic() + 60
    while (
        service.get(f"/v1/jobs/{job['job_id']}").json()["progress"]["step"]
        in (
            "starting",
            "ingesting",
        )
        and time.monotonic() < end
    ):
        time.sleep(0.2)
    process = jobs._processes[job["job_id"]]
    os.kill(process.pid, signal.SIGKILL)
    failed = wait_for(service, job["job_id"])
    assert failed["state"] == "failed"
    assert failed["error"]["code"] == "interrupted"
    assert "previous version is still current" in failed["error"]["message"]
    assert service.get("/v1/versions").json()["current"] == 1
    assert service.post("/v1/assign", json={"items": [{"text": "meter"}]}).json()["version"] == 1


def test_an_unknown_job_is_404(service: Service) -> None:
    res = service.get("/v1/jobs/nothing")
    assert res.status_code == 404 and error_of(res)["code"] == "unknown_job"


def test_reports_move_a_job_along() -> None:
    job = Job(id="j", kind="refresh", options={})
    Jobs._apply(job, ("running", "t1"))
    assert job.state == "running" and job.started_at == "t1" and not job.finished
    Jobs._apply(job, ("progress", 3, 7, "fitting"))
    assert job.progress == {"done": 3, "total": 7, "step": "fitting"}
    Jobs._apply(job, ("failed", "t2", "workspace_busy", "another command holds it"))
    assert job.finished and job.error == {
        "code": "workspace_busy",
        "message": "another command holds it",
    }
    assert job.to_json()["error"]["code"] == "workspace_busy"


def test_old_finished_jobs_are_forgotten(tmp_path) -> None:
    jobs = Jobs(tmp_path, keep=2)
    for i in range(4):
        job = Job(id=str(i), kind="refresh", options={}, state="done")
        jobs._jobs[job.id] = job
        jobs._forget_old()
    assert list(jobs._jobs) == ["2", "3"]
    assert jobs.get("3") is not None and jobs.get("0") is None
