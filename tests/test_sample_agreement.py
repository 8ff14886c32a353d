"""Fast subset of bench/sample_agreement.py: publishing from a sample agrees with a fit on
every call (docs/methods.md, "Sweeping a sample").

One planted corpus (6 reasons, 600 invented calls over several months) is prepared by the
product; each family is fitted at the true K on every call and from a stratified sample of
300 calls (NMF: fitted on the sample, every call transformed; LDA: fitted on the sample, then
online passes over every call). Measured 2026-12-05 (``bench/sample_agreement.py --calls 600
--reasons 6 --sample 300 --seeds 2``, shared 2-core machine; the figures do not depend on
it): lead agreement after Hungarian matching NMF 0.993 (both seeds), LDA 0.993 / 0.857; NMI
against the reasons from the sample NMF 0.903, LDA 0.922 / 0.854. The floors catch a broken
sample path (a random lead agreement is about 1/6), not a small shift of the figures.
"""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.demo.harness import PlantedWorkspace, build_workspace
from talkthemes.demo.planted import PlantedSpec
from talkthemes.demo.sample_harness import compare_sample_fit, matched_lead_agreement


def test_matched_agreement_sees_through_a_relabelling() -> None:
    rng = np.random.default_rng(0)
    topics = rng.dirichlet(np.full(30, 0.1), size=5)
    shares = rng.dirichlet(np.full(5, 0.3), size=200)
    order = np.array([3, 0, 4, 1, 2])
    same = matched_lead_agreement(topics, shares, topics[order], shares[:, order])
    assert same.all()
    shifted = np.roll(shares, 1, axis=1)  # every lead moves to another theme
    assert not matched_lead_agreement(topics, shares, topics, shifted).any()


@pytest.fixture(scope="module")
def pw(tmp_path_factory: pytest.TempPathFactory) -> PlantedWorkspace:
    spec = PlantedSpec(reasons=6, calls=600, seed=0)
    root = tmp_path_factory.mktemp("planted-sample")
    return build_workspace(root, spec, settings={"prepare": {"n_process": 1}})


@pytest.mark.parametrize(("family", "floor"), [("nmf", 0.9), ("lda", 0.8)])
def test_fit_from_a_sample_agrees_with_a_fit_on_every_call(
    pw: PlantedWorkspace, family: str, floor: float
) -> None:
    r = compare_sample_fit(pw, family, 6, seed=0, sample=300)
    assert r.sample == 300 and r.calls == len(pw.corpus.doc_ids)
    assert r.agreement >= floor and r.agreement_outside >= floor, r
    assert r.nmi_sample >= 0.75 and r.ari_sample >= 0.7, r
