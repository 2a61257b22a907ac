"""costcheck: does a transport cost (or matching surplus) satisfy the conditions optimal-transport theory needs?

The pipeline, one module a step::

    cost file --loader--> Cost --derivatives--> Derivatives --checks--> verdicts --render--> output

Start with :func:`load`, :func:`from_expression` or :func:`from_function`.

The API names are imported on first use (PEP 562 ``__getattr__``): ``import costcheck``
itself loads no sympy, SciPy or JAX, so a command-line run answered from the result
cache starts in a fraction of a second.
"""

from importlib import import_module

__version__ = "0.1.0"

#: public name → module that defines it
_LAZY = {
    "check": "api", "from_expression": "api", "from_function": "api", "load": "api", "mtw_tensor": "api",
    "Cost": "cost",
    "CostFileError": "errors", "CostcheckError": "errors", "UsageError": "errors",
}

__all__ = [
    "Cost", "CostFileError", "CostcheckError", "UsageError", "check", "from_expression", "from_function", "load",
    "mtw_tensor", "__version__",
]


def __getattr__(name: str):
    if name in _LAZY:
        value = getattr(import_module(f"{__name__}.{_LAZY[name]}"), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
