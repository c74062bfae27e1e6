"""A picture of one mode from saved results: the magnitude of E (or H) on three principal
cut planes, and the field's arrows face-on on the plane chosen from the arrows' field.

Drawn from ``fields.vtu`` (the cell data of every result folder, 3D or revolved
axisymmetric), so pictures can be made again at any time without solving. Left panel: the
part's regions as faint skins, and the magnitude on the planes x, y, z through the energy
centre of the region holding most of the mode's energy (viz.planes: through a puck or a
gap, not through the enclosure's middle); right panel: the plane through the strongest
cell of the arrows' field across which that field carries least energy, face-on, with the
magnitude in colour and the arrows in the plane. Planes are unlit, so their colours are the
colour map's and read against the bar at any angle. Colours and arrow lengths top at the
99th percentile of the magnitude by volume (viz.scales), so a singular edge does not paint
the rest of the part black; the bar says so. The colour map is cividis (J. R. Nuñez,
C. R. Anderton and R. S. Renslow, "Optimizing colormaps with consideration for color vision
deficiency", PLoS ONE 13(7) (2018) e0199239): monotone in lightness, so magnitudes read
alike for every reader. Fixed image size, off-screen.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .mesh_picture import BACKGROUND, INK, PALETTE, _quiet_vtk
from .planes import arrow_plane, energy_centre
from .scales import clipped_top, colour_bar, labels_under_bars

IMAGE_SIZE = (1500, 750)
COLOUR_MAP = "cividis"
MAX_ARROWS = 350
AXES = "xyz"


def mode_label(index: int) -> str:
    return f"m{index:02d}"


FIELD_UNITS = {"E": "V/m", "H": "A/m"}


def draw_mode_picture(grid, index: int, title: str, path: Path, *, arrows: str = "E",
                      field: str = "E", size: tuple[int, int] = IMAGE_SIZE) -> None:
    """Write the picture of mode ``index`` (1-based) of ``grid`` (fields.vtu read with
    pyvista) to ``path`` (.png): the magnitude of ``field`` ("E" or "H") in colour and
    arrows of ``arrows`` ("E" or "H") on the plane chosen from that field."""
    for name, value in (("arrows", arrows), ("field", field)):
        if value not in FIELD_UNITS:
            raise ValueError(f"{name} must be 'E' or 'H', got {value!r}")
    with _quiet_vtk():
        import pyvista as pv

        tag = mode_label(index)
        grid = grid.copy()
        shown = np.asarray(grid.cell_data[f"{tag}_{field}"])
        magnitude = f"|{field}|"
        grid.cell_data[magnitude] = np.linalg.norm(shown, axis=1)
        arrow_field = np.asarray(grid.cell_data[f"{tag}_{arrows}"])
        grid.cell_data["arrows"] = arrow_field
        volumes = np.abs(np.asarray(grid.compute_cell_sizes(length=False, area=False)
                                    .cell_data["Volume"]))
        centres = np.asarray(grid.cell_centers().points)
        top = clipped_top(grid.cell_data[magnitude], volumes)
        plotter = pv.Plotter(off_screen=True, shape=(1, 2), window_size=list(size),
                             theme=pv.themes.Theme(), border=False)
        try:
            plotter.set_background(BACKGROUND)
            # (VTK's text font has no "|": the bar says "magnitude")
            bar = colour_bar(f"magnitude of {field} ({FIELD_UNITS[field]} at 1 J stored)")
            # unlit: a plane's colour is the colour map's, whatever its angle to the light
            look = dict(scalars=magnitude, cmap=COLOUR_MAP, clim=(0, top), lighting=False)
            plotter.subplot(0, 0)
            _regions(pv, plotter, grid)
            origin = energy_centre(centres, _energy(grid, tag, shown, volumes),
                                   _cell_regions(grid))
            for axis in AXES:
                cut = grid.slice(normal=axis, origin=origin)
                if cut.n_cells:
                    plotter.add_mesh(cut, scalar_bar_args=bar, show_scalar_bar=True, **look)
            plotter.view_isometric()
            plotter.add_text(title, position="upper_left", font_size=13, color=INK)
            plotter.add_text("planes through the energy centre of the region holding most "
                             "energy", position="lower_left", font_size=8, color=INK)
            plotter.subplot(0, 1)
            normal, plane_origin = arrow_plane(centres, arrow_field, volumes)
            cut = grid.slice(normal=AXES[normal], origin=plane_origin)
            plotter.add_mesh(cut, show_scalar_bar=False, **look)
            _arrows(pv, plotter, cut, normal, clipped_top(np.linalg.norm(arrow_field, axis=1),
                                                           volumes))
            _face_on(plotter, normal)
            plotter.add_text(f"{arrows} arrows on the plane {AXES[normal]} = "
                             f"{plane_origin[normal] * 1e3:.4g} mm (through the strongest "
                             f"{arrows})", position="upper_left", font_size=11, color=INK)
            labels_under_bars(plotter)
            plotter.screenshot(str(path))
        finally:
            plotter.close()


def _cell_regions(grid):
    return np.asarray(grid.cell_data["region"]) if "region" in grid.cell_data else None


def _energy(grid, tag: str, shown: np.ndarray, volumes: np.ndarray) -> np.ndarray:
    """Stored energy per cell (J) from the energy densities, or |field|² V without them."""
    names = [f"{tag}_we", f"{tag}_wm"]
    if all(n in grid.cell_data for n in names):
        density = sum(np.asarray(grid.cell_data[n], dtype=float) for n in names)
        return density * volumes
    return np.sum(shown**2, axis=1) * volumes


def _regions(pv, plotter, grid) -> None:
    """Each region's skin, faint, in the palette of the mesh pictures."""
    if "region" not in grid.cell_data:
        return
    for k, rid in enumerate(np.unique(grid.cell_data["region"])):
        part = grid.extract_cells(np.flatnonzero(grid.cell_data["region"] == rid))
        plotter.add_mesh(part.extract_surface(algorithm="dataset_surface"),
                         color=PALETTE[k % len(PALETTE)], opacity=0.1, show_scalar_bar=False)


def _arrows(pv, plotter, cut, normal: int, top: float) -> None:
    """Arrows of the in-plane field, their length proportional to it up to ``top`` (the
    clipped scale) and no longer above, so that singular corners do not hide the rest."""
    if cut.n_cells == 0:
        return
    centres = cut.cell_centers()
    vectors = np.asarray(cut.cell_data["arrows"]).copy()
    vectors[:, normal] = 0.0                     # the in-plane part
    pick = np.arange(cut.n_cells)
    if pick.size > MAX_ARROWS:
        pick = np.random.default_rng(7).choice(pick, MAX_ARROWS, replace=False)
    points = pv.PolyData(np.asarray(centres.points)[pick])
    chosen = vectors[pick]
    length = np.linalg.norm(chosen, axis=1)
    clip = np.minimum(1.0, top / np.maximum(length, 1e-300))
    scale = 0.04 * max(cut.length, 1e-12) / max(top, 1e-300)
    points["vectors"] = chosen * (clip * scale)[:, None]
    glyphs = points.glyph(orient="vectors", scale="vectors", factor=1.0)
    plotter.add_mesh(glyphs, color=INK, show_scalar_bar=False, lighting=False)


def _face_on(plotter, normal: int) -> None:
    {0: plotter.view_yz, 1: plotter.view_xz, 2: plotter.view_xy}[normal]()
