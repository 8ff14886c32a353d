"""Topic models: LDA (gensim) and NMF (scikit-learn), both returning FittedTopics."""

from talkthemes.models.base import FittedTopics, top_terms
from talkthemes.models.lda import LdaTopics
from talkthemes.models.lda_infer import infer_doc_topics
from talkthemes.models.lda_state import restore_lda
from talkthemes.models.lda_train import ConvergenceTrace
from talkthemes.models.nmf import NmfTopics, transform_counts

__all__ = [
    "ConvergenceTrace",
    "FittedTopics",
    "LdaTopics",
    "NmfTopics",
    "infer_doc_topics",
    "restore_lda",
    "top_terms",
    "transform_counts",
]
