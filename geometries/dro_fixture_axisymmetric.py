"""Mesh dro_fixture_axisymmetric.toml and draw it (Larkspur Microwave Works is a fictional lab).

Run: python geometries/dro_fixture_axisymmetric.py (the 3D mesh of the same part)
"""

import sys

from _demo import mesh_and_show

if __name__ == "__main__":
    sys.exit(mesh_and_show(__file__))
