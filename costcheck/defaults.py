"""Defaults of a run, in a module that imports nothing (the command line reads them
before it knows whether any check will run at all)."""

#: Pairs sampled by a default check: enough to finish a 2-D cost in seconds.
DEFAULT_BUDGET = 4096

#: The default random seed; every run is reproducible for its seed.
DEFAULT_SEED = 20261201

#: Levels of y on which k(y) is computed by ``costcheck nested``.
DEFAULT_LEVELS = 96
