"""The replay: how such statements held in the past (PIT, coverage, scores), the prequential choice of method, recalibration, and the cache of replayed origins."""
