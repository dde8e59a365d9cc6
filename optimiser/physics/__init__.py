"""Physics, one domain a module, on numpy arrays with the design (batch) dimension first, SI
units inside, never printing: the rectifier's conduction laws, the filter ladder, the supply's
steady state, transients, ratings and life, the screening tier's analytic steady state, and the
transformer."""
