"""Helpers shared by tests (not tests themselves)."""
