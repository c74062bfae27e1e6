"""Mesh three_cell_accelerating_structure.toml and draw it (Larkspur Microwave Works is a fictional lab).

Run: python geometries/three_cell_accelerating_structure.py (the 3D mesh of the same part)
"""

import sys

from _demo import mesh_and_show

if __name__ == "__main__":
    sys.exit(mesh_and_show(__file__))
