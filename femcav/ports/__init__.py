"""Waveguide ports: the TE, TM and TEM modes of a homogeneous port face (cross_section) and
the hybrid modes of a layered one (layered_face), their termination by the modal admittance
(termination, port_system), and the loaded modes by successive linearisation (loaded_solve)
with their external and loaded Q (loading)."""
