"""Everything about the MTW tensor ``T_ijkl`` and the form ``S(ξ, η)``: the batched algebra, the
margins (dispatched by dimension to :mod:`.n2` and :mod:`.n3`), the form in mpmath and the
closed form in sympy."""
