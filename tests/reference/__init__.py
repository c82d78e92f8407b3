"""Checks against the outside world; every assertion names its source beside it."""
