"""The n = 3 margin compiled per pair (numba): small 3 × 3 helpers, the minimum of the
biquadratic form over orthogonal unit pairs, and the driver over the derivative fields."""
