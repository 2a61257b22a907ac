"""Arrays in, arrays out: sampling, local search, high-precision and exact confirmation, the
curvature kernels and the domain geometry that the conditions are made of.  No module here
builds a verdict or reads a check context."""
