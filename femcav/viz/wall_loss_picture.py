"""A picture of where a mode heats the metal walls: the time-averaged loss per area
(R_s/2 |H_t|², W/m² at 1 J stored; the surface current density is |J_s| = |H_t|, so the
picture is also that of the surface current squared) on every metal wall, from
``wall_loss.vtu``.

Two views of the walls, from opposite corners, so that no wall is only ever seen from
behind; unlit, so that the colour is the colour map's; the scale tops at a percentile by
area (femcav.viz.scales), because the loss at a sharp metal edge grows without bound.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .mesh_picture import BACKGROUND, INK, _quiet_vtk
from .mode_picture import COLOUR_MAP, mode_label
from .scales import clipped_top, colour_bar, labels_under_bars

IMAGE_SIZE = (1500, 750)


def draw_wall_loss_picture(walls, index: int, title: str, path: Path,
                           size: tuple[int, int] = IMAGE_SIZE) -> None:
    """Write the wall-loss picture of mode ``index`` of ``walls`` (wall_loss.vtu read with
    pyvista) to ``path`` (.png)."""
    with _quiet_vtk():
        import pyvista as pv

        surface = walls.copy()
        loss = np.asarray(surface.cell_data[f"{mode_label(index)}_loss"], dtype=float)
        areas = np.abs(np.asarray(surface.compute_cell_sizes(length=False, volume=False)
                                  .cell_data["Area"]))
        top = clipped_top(loss, areas, 99.0)
        surface.cell_data["loss"] = loss
        plotter = pv.Plotter(off_screen=True, shape=(1, 2), window_size=list(size),
                             theme=pv.themes.Theme(), border=False)
        try:
            plotter.set_background(BACKGROUND)
            bar = colour_bar("wall loss (W per square metre at 1 J stored)", what="area")
            for column, direction in ((0, (1, 1, 1)), (1, (-1, -1, -1))):
                plotter.subplot(0, column)
                plotter.add_mesh(surface, scalars="loss", cmap=COLOUR_MAP, clim=(0, top),
                                 lighting=False, show_scalar_bar=column == 0,
                                 scalar_bar_args=bar)
                plotter.view_vector(direction)
                plotter.add_text(title if column == 0 else "the same walls seen from the "
                                 "opposite corner",
                                 position="upper_left", font_size=13 if column == 0 else 11,
                                 color=INK)
            labels_under_bars(plotter)
            plotter.screenshot(str(path))
        finally:
            plotter.close()
