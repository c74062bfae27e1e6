"""Mesh wavemeter_post_sweep.toml and draw it (Larkspur Microwave Works is a fictional lab).

Run: python geometries/wavemeter_post_sweep.py
"""

import sys

from _demo import mesh_and_show

if __name__ == "__main__":
    sys.exit(mesh_and_show(__file__))
