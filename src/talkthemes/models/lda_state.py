"""A fitted LDA model as named arrays and JSON, and back, without pickle.

:func:`lda_state_arrays` and :func:`lda_state_params` take a gensim ``LdaModel`` apart;
:func:`restore_lda` rebuilds a :class:`~talkthemes.models.csr_lda.CsrLdaModel` from the parts
that infers exactly like the original and can keep training. See docs/methods_models.md,
"State".
"""

from __future__ import annotations

import logging
from collections.abc import Mapping, Sequence
from typing import Any

import gensim
import numpy as np
from gensim.models import LdaModel

from talkthemes.errors import InputError
from talkthemes.models.base import check_vocabulary
from talkthemes.models.csr_lda import CsrLdaModel

__all__ = ["lda_state_arrays", "lda_state_params", "restore_lda"]

logger = logging.getLogger(__name__)

_STATE_ARRAYS = ("alpha", "eta", "state_eta", "sstats", "expElogbeta")
_STATE_PARAMS = (
    "num_topics",
    "num_terms",
    "dtype",
    "iterations",
    "gamma_threshold",
    "chunksize",
    "decay",
    "offset",
    "passes",
    "update_every",
    "num_updates",
    "numdocs",
    "optimize_alpha",
    "optimize_eta",
    "gensim_version",
)


def lda_state_arrays(model: LdaModel) -> dict[str, np.ndarray]:
    """The arrays that define a fitted gensim ``LdaModel`` for inference and further updates.

    Parameters
    ----------
    model : gensim.models.LdaModel

    Returns
    -------
    dict of str to numpy.ndarray
        Copies, in the model's dtype, of ``alpha`` (K,); ``eta`` (V,), the model's η;
        ``state_eta`` (V,), the η inside the sufficient-statistics state, which forms
        λ = η + sstats; ``sstats`` (K, V); and ``expElogbeta`` (K, V), exp E[ln β] as gensim
        last computed it.

    Notes
    -----
    In gensim 4.4.0 ``eta='auto'`` updates the model's ``eta`` after each M-step but not the
    state's copy, which alone enters λ, the topics and ``expElogbeta``; the model's ``eta``
    only enters :meth:`~gensim.models.LdaModel.bound`. Both are saved so that a restored
    model behaves exactly like the original.
    """
    if np.ndim(model.eta) != 1 or np.ndim(model.state.eta) != 1:
        raise InputError("LDA state: only a per-term eta vector can be saved")
    return {
        "alpha": np.array(model.alpha, copy=True),
        "eta": np.array(model.eta, copy=True),
        "state_eta": np.array(model.state.eta, copy=True),
        "sstats": np.array(model.state.sstats, copy=True),
        "expElogbeta": np.array(model.expElogbeta, copy=True),
    }


def lda_state_params(model: LdaModel) -> dict[str, Any]:
    """JSON-serialisable settings and counters that go with :func:`lda_state_arrays`."""
    return {
        "num_topics": int(model.num_topics),
        "num_terms": int(model.num_terms),
        "dtype": np.dtype(model.dtype).name,
        "iterations": int(model.iterations),
        "gamma_threshold": float(model.gamma_threshold),
        "chunksize": int(model.chunksize),
        "decay": float(model.decay),
        "offset": float(model.offset),
        "passes": int(model.passes),
        "update_every": int(model.update_every),
        "num_updates": int(model.num_updates),
        "numdocs": int(model.state.numdocs),
        "optimize_alpha": bool(model.optimize_alpha),
        "optimize_eta": bool(model.optimize_eta),
        "gensim_version": gensim.__version__,
    }


def restore_lda(
    arrays: Mapping[str, np.ndarray],
    params: Mapping[str, Any],
    *,
    seed: int = 0,
    vocabulary: Sequence[str] | None = None,
) -> LdaModel:
    """Rebuild a gensim ``LdaModel`` from :func:`lda_state_arrays` and :func:`lda_state_params`.

    The rebuilt model's ``inference`` gives exactly the original model's result when both
    random states are seeded alike; ``get_topics``, ``bound`` and ``update`` work as on the
    original.

    Parameters
    ----------
    arrays : mapping of str to numpy.ndarray
    params : mapping of str to JSON values
    seed : int
        Seed of the rebuilt model's random state.
    vocabulary : list of str, optional
        Terms, for gensim's log lines.

    Returns
    -------
    gensim.models.LdaModel

    Raises
    ------
    InputError
        When a part is missing or an array has the wrong shape or dtype.
    """
    missing = [name for name in _STATE_ARRAYS if name not in arrays]
    missing += [name for name in _STATE_PARAMS if name not in params]
    if missing:
        raise InputError(f"LDA state: missing {', '.join(missing)}")
    n_topics, n_terms = int(params["num_topics"]), int(params["num_terms"])
    dtype = np.dtype(str(params["dtype"]))
    expected = {
        "alpha": (n_topics,),
        "eta": (n_terms,),
        "state_eta": (n_terms,),
        "sstats": (n_topics, n_terms),
        "expElogbeta": (n_topics, n_terms),
    }
    for name, shape in expected.items():
        arr = np.asarray(arrays[name])
        if arr.shape != shape:
            raise InputError(f"LDA state: array {name!r} has shape {arr.shape}, expected {shape}")
        if arr.dtype != dtype:
            raise InputError(f"LDA state: array {name!r} has dtype {arr.dtype}, expected {dtype}")
        if not np.all(np.isfinite(arr)):
            raise InputError(f"LDA state: array {name!r} holds values that are not finite")
    if params["gensim_version"] != gensim.__version__:
        logger.warning(
            "LDA state was saved with gensim %s and is loaded with gensim %s",
            params["gensim_version"],
            gensim.__version__,
        )
    model = CsrLdaModel(
        corpus=None,
        num_topics=n_topics,
        id2word=check_vocabulary("LDA state", vocabulary, n_terms),
        chunksize=int(params["chunksize"]),
        passes=int(params["passes"]),
        update_every=int(params["update_every"]),
        alpha=np.array(arrays["alpha"], copy=True),
        eta=np.array(arrays["eta"], copy=True),
        decay=float(params["decay"]),
        offset=float(params["offset"]),
        eval_every=None,
        iterations=int(params["iterations"]),
        gamma_threshold=float(params["gamma_threshold"]),
        random_state=seed,
        dtype=dtype.type,
    )
    model.state.eta = np.array(arrays["state_eta"], copy=True)
    model.state.sstats = np.array(arrays["sstats"], copy=True)
    model.state.numdocs = int(params["numdocs"])
    model.num_updates = int(params["num_updates"])
    model.expElogbeta = np.array(arrays["expElogbeta"], copy=True)
    model.optimize_alpha = bool(params["optimize_alpha"])
    model.optimize_eta = bool(params["optimize_eta"])
    # the constructor drew a random starting state from the generator: start it afresh
    model.random_state = np.random.RandomState(seed)
    return model
