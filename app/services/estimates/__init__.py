"""Estimate rounds: each person's number before the agreed one, the spread, and the agreement."""
