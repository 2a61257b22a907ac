"""Defaults of the nestedness analysis, importable without numpy or sympy (the CLI builds its parser from them)."""

#: levels of y on which k(y) is computed by ``costcheck nested``
DEFAULT_LEVELS = 96
