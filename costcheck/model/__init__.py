"""The nouns every later step reads: the domain, the cost (always minimised), the header of a
cached result and the verdict with its evidence.  Imports nothing here: ``model.verdict`` stays
light for the cached path, while ``model.cost`` imports sympy."""
