"""costcheck: does a transport cost (or matching surplus) satisfy the conditions optimal-transport theory needs?

The pipeline, one module a step::

    cost file --loader--> Cost --derivatives--> Derivatives --checks--> verdicts --render--> output

Start with :func:`load`, :func:`from_expression` or :func:`from_function`.
"""

from .api import check, from_expression, from_function, load, mtw_tensor
from .cost import Cost
from .errors import CostFileError, CostcheckError, UsageError

__version__ = "0.1.0"

__all__ = [
    "Cost", "CostFileError", "CostcheckError", "UsageError", "check", "from_expression", "from_function", "load",
    "mtw_tensor", "__version__",
]
