"""The shared core every area builds on: study tree, results, totals, study list, errors."""
