"""Combining and scoring the forecasts: weights, benchmarks, the track record and the comparative tests."""
