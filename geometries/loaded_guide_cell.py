"""Mesh loaded_guide_cell.toml and draw it (Larkspur Microwave Works is a fictional lab).

Run: python geometries/loaded_guide_cell.py
"""

import sys

from _demo import mesh_and_show

if __name__ == "__main__":
    sys.exit(mesh_and_show(__file__))
