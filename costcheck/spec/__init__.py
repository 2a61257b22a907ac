"""From a cost file to a validated cost: reading (size limit, safe YAML, JSON Schema), the
safe expression reader, the data key, the loader and the template.  Imports nothing here
(the cached path reads ``spec.reading`` and ``spec.schema`` without sympy)."""
