"""Mesh isolated_puck_resonator.toml and draw it (Larkspur Microwave Works is a fictional lab).

Run: python geometries/isolated_puck_resonator.py
"""

import sys

from _demo import mesh_and_show

if __name__ == "__main__":
    sys.exit(mesh_and_show(__file__))
