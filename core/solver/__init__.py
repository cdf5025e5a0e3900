"""The circuit as equations: netlists, batched modified nodal analysis, exact rational transfer functions."""
