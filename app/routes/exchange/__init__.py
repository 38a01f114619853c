"""Exports and the study-file import."""
