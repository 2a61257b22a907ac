"""The n = 2 margin: the plane algebra on columns, the certified minimum of the quartic
``S(θ)`` and the fused JAX kernel."""
