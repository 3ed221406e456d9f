"""Use cases (receive lot, record measurement, evaluate, decide, sign): the only place that commits."""
