"""Defaults of a run, in a module that imports nothing (the command line reads them
before it knows whether any check will run at all)."""

#: Pairs sampled by a default check: enough to finish a 2-D cost in seconds.
DEFAULT_BUDGET = 4096

#: The default random seed; every run is reproducible for its seed.
DEFAULT_SEED = 20261201

#: Levels of y on which k(y) is computed by ``costcheck nested``.
DEFAULT_LEVELS = 96

#: Seconds each condition's proof attempt may take in a default check (``--prove`` allows
#: :data:`LONG_PROOF_SECONDS`): enough for the costs of one distance or difference, which
#: prove in well under a second, without holding up a catalog on the charts that do not.
DEFAULT_PROOF_SECONDS = 4.0
LONG_PROOF_SECONDS = 60.0
#: Cells (boxes) each proof attempt may split the domain into.
DEFAULT_PROOF_CELLS = 20000
