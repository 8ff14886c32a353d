"""Metrics over topic models: coherence, stability, diversity, relevance, layout."""
