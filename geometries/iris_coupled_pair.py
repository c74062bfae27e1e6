"""Mesh iris_coupled_pair.toml and draw it (Larkspur Microwave Works is a fictional lab).

Run: python geometries/iris_coupled_pair.py
"""

import sys

from _demo import mesh_and_show

if __name__ == "__main__":
    sys.exit(mesh_and_show(__file__))
