"""Unit tests for talkthemes.metrics.layout (JS distances and classical MDS)."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.metrics.layout import classical_mds, js_distance_matrix, topic_layout


def test_js_distance_bounds_and_symmetry() -> None:
    rng = np.random.default_rng(2)
    p = rng.random((6, 9))
    d = js_distance_matrix(p)
    assert np.array_equal(d, d.T)
    assert np.all(np.diag(d) == 0)
    assert np.all((d >= 0) & (d <= 1))
    disjoint = js_distance_matrix(np.array([[1.0, 0.0], [0.0, 1.0]]))
    assert disjoint[0, 1] == pytest.approx(1.0)
    # rows are normalised first: scaling a row changes nothing
    np.testing.assert_allclose(js_distance_matrix(p * 7.0), d, atol=1e-12)


def test_js_distance_in_nats() -> None:
    d = js_distance_matrix(np.array([[1.0, 0.0]]), np.array([[0.0, 1.0]]), base=np.e)
    assert d[0, 0] == pytest.approx(np.sqrt(np.log(2)))


def test_mds_recovers_points_on_a_line() -> None:
    x = np.array([0.0, 1.0, 3.0, 6.0])
    d = np.abs(x[:, None] - x[None, :])
    got = classical_mds(d, 2)
    assert got.explained == pytest.approx(1.0)
    assert got.eigenvalues[1] == pytest.approx(0.0, abs=1e-10)
    np.testing.assert_allclose(
        np.abs(got.coordinates[:, 0][:, None] - got.coordinates[:, 0][None, :]), d, atol=1e-10
    )
    # sign convention: the entry of largest magnitude of each axis is positive
    axis = got.coordinates[:, 0]
    assert axis[np.argmax(np.abs(axis))] > 0


def test_mds_explained_share_for_a_square() -> None:
    corners = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
    d = np.linalg.norm(corners[:, None] - corners[None, :], axis=2)
    got = classical_mds(d, 1)
    assert got.explained == pytest.approx(0.5)
    assert got.coordinates.shape == (4, 1)


def test_mds_of_coincident_points_and_a_single_topic() -> None:
    got = classical_mds(np.zeros((3, 3)))
    assert np.all(got.coordinates == 0)
    assert got.explained == 1.0
    one = classical_mds(np.zeros((1, 1)))
    assert one.coordinates.shape == (1, 2)


def test_topic_layout_is_deterministic() -> None:
    rng = np.random.default_rng(4)
    phi = rng.dirichlet(np.ones(12) * 0.3, size=7)
    first = topic_layout(phi)
    second = topic_layout(phi[:, :].copy())
    assert first.coordinates.shape == (7, 2)
    np.testing.assert_array_equal(first.coordinates, second.coordinates)
    assert 0 < first.explained <= 1


def test_bad_input_is_refused() -> None:
    with pytest.raises(InputError, match="row 1 has no weight"):
        js_distance_matrix(np.array([[1.0, 0.0], [0.0, 0.0]]))
    with pytest.raises(InputError, match="row 0 has a negative"):
        js_distance_matrix(np.array([[-1.0, 2.0]]))
    with pytest.raises(InputError, match="2 and 3 terms"):
        js_distance_matrix(np.ones((1, 2)), np.ones((1, 3)))
    with pytest.raises(InputError, match="symmetric"):
        classical_mds(np.array([[0.0, 1.0], [2.0, 0.0]]))
    with pytest.raises(InputError, match="square"):
        classical_mds(np.zeros((2, 3)))
