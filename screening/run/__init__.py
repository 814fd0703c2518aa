"""Screening one case or many samples: the result of a prepared case, Monte Carlo, allowable values, the file pipeline."""
