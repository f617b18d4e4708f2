"""Analyses: pure functions of an elaborated design, memoised on the context."""
