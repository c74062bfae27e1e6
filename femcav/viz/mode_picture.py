"""A picture of one mode from saved results: |E| on the three principal cut planes, and the
field's arrows on the plane through its maximum.

Drawn from ``fields.vtu`` (the cell data of every result folder, 3D or revolved
axisymmetric), so pictures can be made again at any time without solving. Left panel: the
part's regions as faint shaded skins, and |E| on the planes x, y, z through the centre of the
part; right panel: the plane through the cell where |E| is largest, the one of the three
principal orientations across which E has the least energy (so that the field lies mostly
in it), seen face-on, with |E| in colour and arrows of E (or H) in its plane. The colour
map is cividis (J. R. Nuñez, C. R. Anderton and R. S. Renslow, "Optimizing colormaps with
consideration for color vision deficiency", PLoS ONE 13(7) (2018) e0199239): monotone in
lightness, so magnitudes read alike for every reader. Fixed image size, off-screen.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .mesh_picture import BACKGROUND, INK, PALETTE, _quiet_vtk

IMAGE_SIZE = (1500, 750)
COLOUR_MAP = "cividis"
MAX_ARROWS = 350
AXES = "xyz"


def mode_label(index: int) -> str:
    return f"m{index:02d}"


def draw_mode_picture(grid, index: int, title: str, path: Path, *, arrows: str = "E",
                      size: tuple[int, int] = IMAGE_SIZE) -> None:
    """Write the picture of mode ``index`` (1-based) of ``grid`` (fields.vtu read with
    pyvista) to ``path`` (.png); ``arrows`` is "E" or "H"."""
    if arrows not in ("E", "H"):
        raise ValueError(f"arrows must be 'E' or 'H', got {arrows!r}")
    with _quiet_vtk():
        import pyvista as pv

        tag = mode_label(index)
        grid = grid.copy()
        E = np.asarray(grid.cell_data[f"{tag}_E"])
        grid.cell_data["|E|"] = np.linalg.norm(E, axis=1)
        grid.cell_data["arrows"] = np.asarray(grid.cell_data[f"{tag}_{arrows}"])
        top = float(grid.cell_data["|E|"].max()) or 1.0
        plotter = pv.Plotter(off_screen=True, shape=(1, 2), window_size=list(size),
                             theme=pv.themes.Theme(), border=False)
        try:
            plotter.set_background(BACKGROUND)
            # (VTK's text font has no "|": the bar says "magnitude")
            bar = {"title": "magnitude of E (V/m at 1 J stored)", "color": INK, "fmt": "%.3g",
                   "vertical": False, "position_x": 0.2, "position_y": 0.04, "width": 0.6}
            plotter.subplot(0, 0)
            _regions(pv, plotter, grid)
            centre = np.asarray(grid.center)
            for axis in AXES:
                cut = grid.slice(normal=axis, origin=centre)
                if cut.n_cells:
                    plotter.add_mesh(cut, scalars="|E|", cmap=COLOUR_MAP, clim=(0, top),
                                     scalar_bar_args=bar, show_scalar_bar=True)
            plotter.view_isometric()
            plotter.add_text(title, position="upper_left", font_size=13, color=INK)
            plotter.subplot(0, 1)
            normal, origin = _arrow_plane(grid, E)
            cut = grid.slice(normal=AXES[normal], origin=origin)
            plotter.add_mesh(cut, scalars="|E|", cmap=COLOUR_MAP, clim=(0, top),
                             show_scalar_bar=False)
            _arrows(pv, plotter, cut, normal)
            _face_on(plotter, normal)
            plotter.add_text(f"{arrows} arrows on the plane {AXES[normal]} = "
                             f"{origin[normal] * 1e3:.4g} mm (through the strongest E)",
                             position="upper_left", font_size=11, color=INK)
            plotter.screenshot(str(path))
        finally:
            plotter.close()


def _regions(pv, plotter, grid) -> None:
    """Each region's skin, faint, in the palette of the mesh pictures."""
    if "region" not in grid.cell_data:
        return
    for k, rid in enumerate(np.unique(grid.cell_data["region"])):
        part = grid.extract_cells(np.flatnonzero(grid.cell_data["region"] == rid))
        plotter.add_mesh(part.extract_surface(algorithm="dataset_surface"),
                         color=PALETTE[k % len(PALETTE)], opacity=0.1, show_scalar_bar=False)


def _arrow_plane(grid, E: np.ndarray) -> tuple[int, np.ndarray]:
    """The principal plane through the |E| maximum across which E carries least energy."""
    strongest = int(np.argmax(np.linalg.norm(E, axis=1)))
    origin = np.asarray(grid.cell_centers().points[strongest])
    volumes = np.abs(np.asarray(grid.compute_cell_sizes(length=False, area=False)
                                .cell_data["Volume"]))
    share = (E**2 * volumes[:, None]).sum(axis=0)
    return int(np.argmin(share)), origin


def _arrows(pv, plotter, cut, normal: int) -> None:
    if cut.n_cells == 0:
        return
    centres = cut.cell_centers()
    vectors = np.asarray(cut.cell_data["arrows"]).copy()
    vectors[:, normal] = 0.0                     # the in-plane part
    pick = np.arange(cut.n_cells)
    if pick.size > MAX_ARROWS:
        pick = np.random.default_rng(7).choice(pick, MAX_ARROWS, replace=False)
    points = pv.PolyData(np.asarray(centres.points)[pick])
    magnitude = np.linalg.norm(vectors[pick], axis=1)
    scale = 0.04 * max(cut.length, 1e-12) / max(float(magnitude.max()), 1e-300)
    points["vectors"] = vectors[pick] * scale
    glyphs = points.glyph(orient="vectors", scale="vectors", factor=1.0)
    plotter.add_mesh(glyphs, color=INK, show_scalar_bar=False)


def _face_on(plotter, normal: int) -> None:
    {0: plotter.view_yz, 1: plotter.view_xz, 2: plotter.view_xy}[normal]()
