"""Criteria, step details, proof test, risk picture."""
