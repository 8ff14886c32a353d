"""Topic models: LDA (gensim) and NMF (scikit-learn), both returning FittedTopics."""
