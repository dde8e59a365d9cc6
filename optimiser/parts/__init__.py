"""Parts data: the catalogues of valves, diodes, capacitors, chokes and resistors, each entry
with its provenance, and the bundled data files (``parts/data/*.yaml``) they and the
transformer's cores, steels, wire and prices are read from."""
