"""Waveguide ports: the TE, TM and TEM modes of a port face (cross_section), their termination by the
modal admittance (termination), and the loaded modes by successive linearisation
(loaded_solve) with their external and loaded Q (loading)."""
