"""A small published demo workspace, built once per test session for the viewer tests.

400 invented demo calls plus one hostile transcript (``A-xss-001``: script and image
tags in every turn, and in its metadata) and one holding planted personal data
(``A-pii-001``, :data:`PII`), prepared, swept with NMF at K = 5 and 8 over
two seeds, K = 5 published, and two themes labelled.
"""

from __future__ import annotations

import csv
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest

from talkthemes.workspace import Workspace

XSS_ID = "A-xss-001"
SCRIPT = "<script>alert(1)</script>"
IMG = "<img src=x onerror=alert(1)>"
# Labels with characters that mean something in Markdown (": ( ) - . %") and in HTML
# ("& < >"): every section must show them as typed.
LABELS = ("Outages: power-cuts (12.5%)", "Bills & <payments>")
XSS_TEXT = (
    f"Customer: The power went out again tonight {SCRIPT} and the outage map shows no outage "
    f"for my street, the power has been off for hours {IMG}\n"
    f"Agent: I am sorry about the power cut {SCRIPT} the crew is on the way and power should be "
    f"back within two hours {IMG}\n"
    f"Customer: Thanks, the outage started at six and the power is still out {SCRIPT} {IMG}\n"
    "Agent: I can see the outage report for your area, the fault crew is working on the "
    f"cable {SCRIPT} and the estimated restoration time is two hours {IMG}\n"
    f"Customer: Will the power outage affect the meter or the bill {SCRIPT} {IMG}\n"
    "Agent: No, the meter keeps working and the outage does not change the bill, please "
    f"report the fault again if the power is not back in two hours {IMG}\n"
    f"Customer: Okay, thanks for the update on the outage and the crew {SCRIPT}\n"
)


PII_ID = "A-pii-001"
# Planted personal data of every kind the viewer, report and exports must mask: a name in
# a speaker label (Yelvorin), a caller introducing herself (Brisha Tamblecourt), a first
# name from the list (Margaret), an e-mail address, an account number, a card number, a
# phone number, a street address with its town, and a postcode. The agent addresses her by
# name in every turn, so whichever turn a screen quotes holds personal data.
PII = (
    "Yelvorin",
    "Brisha",
    "Tamblecourt",
    "Margaret",
    "brisha.tamblecourt@example.org",
    "774215",
    "4111 1111 1111 1111",
    "010-4477",
    "Quillfeather",
    "Harrowgate",
    "QF4 9ZT",
)
PII_TEXT = (
    "AGENT Yelvorin: Thank you for calling about the power, you are through to Yelvorin. "
    "Can I take your name?\n"
    "Customer: My name is Brisha Tamblecourt and the power went out again tonight, the "
    "outage map shows no outage for my street and the power has been off for hours.\n"
    "AGENT Yelvorin: I am sorry about the power cut, Brisha, the crew is on the way and power "
    "should be back within two hours. Can I take the account number and the address?\n"
    "Customer: The account is AC-774215 and the address is 48 Quillfeather Road, Harrowgate "
    "Vale, QF4 9ZT. My neighbour Margaret has no power either, the outage started at six.\n"
    "AGENT Yelvorin: I can see the outage report for your area, Brisha, the fault crew is working "
    "on the cable and the estimated restoration time is two hours.\n"
    "Customer: Please e-mail brisha.tamblecourt@example.org or call (555) 010-4477 when the "
    "power is back. I paid the last bill with card 4111 1111 1111 1111.\n"
    "AGENT Yelvorin: No, Brisha, the meter keeps working and the outage does not change the bill, "
    "please report the fault again if the power is not back in two hours.\n"
)


@dataclass(frozen=True)
class DemoWorkspace:
    """The session's workspace and what the tests need to know about it."""

    ws: Workspace
    labelled: dict[int, str]  # theme id -> label
    xss_id: str = XSS_ID


def _add_xss(folder: Path) -> tuple[Path, Path]:
    calls = folder / "xss"
    calls.mkdir(parents=True)
    (calls / f"{XSS_ID}.txt").write_text(XSS_TEXT, encoding="utf-8")
    (calls / f"{PII_ID}.txt").write_text(PII_TEXT, encoding="utf-8")
    manifest = folder / "xss-manifest.csv"
    with manifest.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(["call_id", "date", "queue", "site", "duration_s", "channel"])
        writer.writerow([XSS_ID, "2026-09-08", "faults", f"Site {IMG}", "240", "phone"])
        writer.writerow([PII_ID, "2026-09-09", "faults", "Velmora", "300", "phone"])
    return calls, manifest


@pytest.fixture(scope="session")
def demo_ws(tmp_path_factory: pytest.TempPathFactory) -> DemoWorkspace:
    """The published demo workspace (read-only for tests; copy it to change it)."""
    from talkthemes.config import render_settings
    from talkthemes.demo.writer import write_demo
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep.run import run_sweep
    from talkthemes.versions.load import load_version
    from talkthemes.versions.publish import publish
    from talkthemes.workspace import atomic_write_text

    root = tmp_path_factory.mktemp("viewer") / "ws"
    ws = Workspace(root)
    ws.init()
    settings = ws.settings()
    settings.sweep.workers = 2
    atomic_write_text(ws.settings_path, render_settings(settings))
    files = write_demo(root.parent / "demo-source", size=400, seed=11)
    xss_calls, xss_manifest = _add_xss(root.parent)
    with ws.lock("test"):
        ingest(ws, [files.exports, xss_calls], manifests=[files.manifest, xss_manifest])
        run_prepare(ws)
        run_sweep(ws, k="5,8", families=["nmf"], seeds=2)
        publish(ws, k=5, family="nmf")
    version = load_version(ws)
    order = version.coverage().argsort()[::-1]
    labelled = {}
    with ws.store() as store:
        for label, pos in zip(LABELS, order, strict=False):
            tid = version.theme_ids[int(pos)]
            store.set_label(tid, label=label)
            labelled[tid] = label
    return DemoWorkspace(ws, labelled)


@pytest.fixture
def ws_copy(demo_ws: DemoWorkspace, tmp_path: Path) -> Workspace:
    """A private copy of the demo workspace that a test may change."""
    target = tmp_path / "copy"
    shutil.copytree(demo_ws.ws.root, target, ignore=shutil.ignore_patterns(".lock"))
    return Workspace(target)


@pytest.fixture(scope="session")
def browser_ws(demo_ws: DemoWorkspace, tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    """A copy of the demo workspace for the browser tests (they type labels into it)."""
    target = tmp_path_factory.mktemp("browser") / "ws"
    shutil.copytree(demo_ws.ws.root, target, ignore=shutil.ignore_patterns(".lock"))
    return Workspace(target)


@pytest.fixture(scope="session")
def report_file(demo_ws: DemoWorkspace, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo workspace's report, written once (with every chart as PNG beside it)."""
    from talkthemes.report import write_report

    out = tmp_path_factory.mktemp("report")
    return write_report(demo_ws.ws, out / "themes.html", png_dir=out / "png")
