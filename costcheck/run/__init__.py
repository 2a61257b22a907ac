"""Orchestration: run the conditions on one cost, loop over files, cache results.  Imports
nothing here (the cached path)."""
