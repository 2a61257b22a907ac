"""Defaults of a run, in a module that imports nothing (the command line reads them
before it knows whether any check will run at all)."""

#: Pairs sampled by a default check: enough to finish a 2-D cost in seconds.
DEFAULT_BUDGET = 4096

#: The default random seed; every run is reproducible for its seed.
DEFAULT_SEED = 20261201

#: Levels of y on which k(y) is computed, by ``costcheck check`` and ``costcheck nested`` alike
#: (``--levels``).  48 rather than 96: on the catalog's two nestedness costs the verdicts agree at
#: 24, 48, 96 and 192 levels, and 48 decides in about two thirds of the time of 96.
DEFAULT_LEVELS = 48

#: Seconds each condition's proof attempt may take in a default check (``--prove`` allows
#: :data:`LONG_PROOF_SECONDS`): enough for the costs of one distance or difference, which
#: prove in well under a second, without holding up a catalog on the charts that do not.
DEFAULT_PROOF_SECONDS = 4.0
LONG_PROOF_SECONDS = 60.0
#: Cells (boxes) each proof attempt may split the domain into.
DEFAULT_PROOF_CELLS = 20000

# Upper bounds of the options a user (or a script fed by a hostile file) can raise; each error
# message names the option and its limit.

#: --budget: sampled pairs per cost (memory grows with it; measured on the 2-D squared distance:
#: 0.9 GB peak at 200,000 pairs, 4 GB at 1,000,000)
MAX_BUDGET = 200_000

#: --seed: 0 .. 2**32 - 1
MAX_SEED = 2**32 - 1

#: a sweep's grid points in all (each one is a whole check)
MAX_SWEEP_POINTS = 10_000

#: --prove-seconds, --simplify-seconds: seconds for one stage
MAX_STAGE_SECONDS = 3600.0

#: --prove-cells
MAX_PROVE_CELLS = 10_000_000

#: --levels
MAX_LEVELS = 100_000

#: --grid: midpoint-rule cells per axis of a source density (the default, None, takes about
#: 40,000 nodes in all: 200 per axis in two dimensions)
MAX_GRID = 4096

#: quadrature nodes of a source density in all (a --grid too fine for the dimension is refused
#: before the grid is built): 2000² in two dimensions, 32 MB per array of them
MAX_DENSITY_NODES = 4_000_000

#: levels × source points (or nodes): the (level, point) arrays of the mass balance hold this
#: many numbers each (8 bytes apiece, several arrays at once): 160 MB per array
MAX_LEVEL_POINTS = 20_000_000

#: --workers of ``costcheck sweep``, ``check`` and ``report``
MAX_WORKERS = 256

# Wall-time bounds on the stages a cost file controls (its expression decides how long they
# take); past a bound the verdict is "undecided" and says so, instead of a hang.

#: building and evaluating the shared derivatives (symbolic differentiation, compilation)
DERIVATIVE_SECONDS = 60.0

#: one condition's check, including the certification of its witness and any proof attempt
CONDITION_SECONDS = 900.0

#: one exact zero test (an expansion of a constant expression)
EXACT_ZERO_SECONDS = 10.0

#: how long ``sweep --scheduler ADDRESS`` waits to reach a Dask scheduler before it says it cannot
SCHEDULER_CONNECT_SECONDS = 5.0
