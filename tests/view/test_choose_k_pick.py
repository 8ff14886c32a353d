"""Choose K opens on the model in use, and names measures as users read them."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from talkthemes.view.choose_k import SweepView, measure_name, measure_text, pick_for


def _sweep() -> SweepView:
    cells = pd.DataFrame(
        {"cell": ["a", "b", "c", "d"], "family": ["lda", "lda", "nmf", "nmf"], "k": [5, 8, 5, 8]}
    )
    recs = {"lda": {"k": 5}, "nmf": {"k": 8}}
    return SweepView(1, "h", Path("."), cells, recs, True, "now")


def test_opens_on_the_current_versions_family_and_k() -> None:
    sweep = _sweep()
    assert pick_for(sweep, "nmf", 5) == ("nmf", 5)  # the version in use, not the first family
    assert pick_for(sweep, "nmf", 12) == ("nmf", 8)  # its K is gone: the family's recommended
    assert pick_for(sweep, None, None) == ("lda", 5)


def test_measures_are_written_as_users_read_them() -> None:
    assert measure_name("c_npmi") == "C_NPMI" and measure_name("u_mass") == "U_Mass"
    assert measure_text("highest c_npmi; c_v lower") == "highest C_NPMI; C_V lower"
