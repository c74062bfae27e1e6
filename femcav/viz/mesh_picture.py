"""A picture of a tagged mesh: every region's boundary in its own colour, edges drawn thin.

The largest region (by volume; usually the air or vacuum filling the enclosure, or the only
region) shows only its outer skin, see-through, so that the parts inside it (a dielectric
puck, a block, a support) can be seen; every other region is drawn opaque, and so are the
walls inside the part's outline (a tuning post, a re-entrant rod, a gap: viz.inner_walls),
in grey. The picture is
rendered off-screen with pyvista at a fixed size, so the same case always gives an image
of the same shape.
"""

from __future__ import annotations

from contextlib import contextmanager
from pathlib import Path

import numpy as np

from ..geometry.mesh import TaggedMesh
from ..units import format_length
from .inner_walls import off_hull

IMAGE_SIZE = (1200, 900)

# The qualitative palette of M. Okabe and K. Ito, "Color Universal Design" (2008), which
# stays distinguishable under the common forms of colour blindness; the order is ours.
PALETTE = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442")
BACKGROUND = "#F6F5F1"
INK = "#1E2328"
SEE_THROUGH = 0.22
INNER_METAL = "#8A8D91"   # walls inside the part's outline: posts, rods, gaps
MARGIN = 24       # pixels
KEY_STEP = 34     # pixels between key lines

# The four faces of a tetrahedron as its local vertices.
FACES = np.array([[1, 2, 3], [0, 2, 3], [0, 1, 3], [0, 1, 2]])


def region_colours(mesh: TaggedMesh) -> dict[str, str]:
    """A palette colour per region, in region-id order (the palette repeats past seven)."""
    ordered = sorted(mesh.region_names, key=mesh.region_names.get)
    return {name: PALETTE[i % len(PALETTE)] for i, name in enumerate(ordered)}


def see_through_region(mesh: TaggedMesh) -> str | None:
    """The region drawn as a see-through skin: the largest (the only one of a one-region
    part, whose inner metal then shows through it)."""
    if not mesh.region_names:
        return None
    volume = np.abs(mesh.tet_volumes())
    return max(mesh.region_names,
               key=lambda name: volume[mesh.tet_region == mesh.region_names[name]].sum())


def region_surfaces(mesh: TaggedMesh) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Per region, the triangles bounding it and the part of them on the mesh's outer boundary.

    A tetrahedron face bounds its region when no other tetrahedron shares it (the outer
    boundary) or when the tetrahedron across it lies in another region (an interface).
    """
    faces = mesh.tets[:, FACES].reshape(-1, 3)
    region = np.repeat(mesh.tet_region, 4)
    _, which, count = np.unique(np.sort(faces, axis=1), axis=0, return_inverse=True,
                                return_counts=True)
    which = which.reshape(-1)
    lowest = np.full(count.size, np.iinfo(np.int64).max)
    highest = np.full(count.size, np.iinfo(np.int64).min)
    np.minimum.at(lowest, which, region)
    np.maximum.at(highest, which, region)
    outer = count[which] == 1
    bounding = outer | (lowest[which] != highest[which])
    return {name: (faces[(region == rid) & bounding], faces[(region == rid) & outer])
            for name, rid in mesh.region_names.items()}


def draw_mesh_picture(mesh: TaggedMesh, path: Path, *, title: str,
                      size: tuple[int, int] = IMAGE_SIZE) -> None:
    """Write a PNG picture of ``mesh`` to ``path`` (whose name must end in .png)."""
    with _quiet_vtk():
        import pyvista as pv

        plotter = pv.Plotter(off_screen=True, window_size=list(size), theme=pv.themes.Theme())
        try:
            _compose(pv, plotter, mesh, title)
            plotter.screenshot(str(path))
        finally:
            plotter.close()


def _compose(pv, plotter, mesh: TaggedMesh, title: str) -> None:
    height = plotter.window_size[1]
    plotter.set_background(BACKGROUND)
    colours = region_colours(mesh)
    skin_only = see_through_region(mesh)
    surfaces = region_surfaces(mesh)
    inner = np.zeros((0, 3), dtype=np.int64)
    for name, colour in colours.items():
        bounding, outer = surfaces[name]
        see_through = name == skin_only
        triangles = outer if see_through else bounding
        if see_through:
            # metal inside the part (posts, rods, gaps) is drawn opaque behind the skin
            inside = off_hull(mesh.points, triangles)
            inner, triangles = triangles[inside], triangles[~inside]
            if len(colours) == 1 and not len(inner):
                see_through = False       # a plain can: nothing inside to show
                skin_only = None
        if len(triangles):
            plotter.add_mesh(pv.PolyData.from_regular_faces(mesh.points, triangles),
                             color=colour, opacity=SEE_THROUGH if see_through else 1.0,
                             show_edges=True, edge_color=_edge_colour(colour), line_width=0.6,
                             ambient=0.2)
    if len(inner):
        plotter.add_mesh(pv.PolyData.from_regular_faces(mesh.points, inner), color=INNER_METAL,
                         show_edges=True, edge_color=_edge_colour(INNER_METAL),
                         line_width=0.6, ambient=0.2)
    plotter.view_isometric()
    plotter.camera.zoom(0.85)  # leave room for the title and the key

    # Title and key down the left edge, one column, so long region names never run off.
    plotter.add_text(f"{title}: {mesh.n_tets} tetrahedra", position=(MARGIN, height - 48),
                     font_size=15, color=INK)
    key = [(f"{name} (see-through)" if name == skin_only else name, colour,
            name == skin_only) for name, colour in colours.items()]
    if len(inner):
        key.append(("walls inside the part (metal, gaps)", INNER_METAL, False))
    for i, (label, colour, see_through) in enumerate(key):
        y = height - 92 - i * KEY_STEP
        _swatch(pv, plotter, MARGIN, y, colour, see_through=see_through)
        plotter.add_text(label, position=(MARGIN + 34, y - 2), font_size=11, color=INK)
    extent = mesh.points.max(axis=0) - mesh.points.min(axis=0)
    plotter.add_text("extent " + " x ".join(format_length(float(e), 4) for e in extent),
                     position=(MARGIN, MARGIN), font_size=10, color=INK)


def _swatch(pv, plotter, x: float, y: float, colour: str, see_through: bool) -> None:
    """A filled square of ``colour`` in pixel coordinates; a see-through region's is paler."""
    from vtkmodules.vtkRenderingCore import vtkActor2D, vtkPolyDataMapper2D

    side = KEY_STEP - 12
    corners = np.array([[x, y, 0], [x + side, y, 0], [x + side, y + side, 0], [x, y + side, 0]],
                       dtype=float)
    mapper = vtkPolyDataMapper2D()
    mapper.SetInputData(pv.PolyData(corners, faces=[4, 0, 1, 2, 3]))
    actor = vtkActor2D()
    actor.SetMapper(mapper)
    actor.GetProperty().SetColor(pv.Color(colour).float_rgb)
    actor.GetProperty().SetOpacity(0.45 if see_through else 1.0)
    plotter.add_actor(actor, reset_camera=False)


def _edge_colour(colour: str) -> str:
    """Edges a shade darker than a light face and a shade lighter than a dark one, so they
    read on every palette colour (brightness by the BT.601 luma weights, common practice)."""
    rgb = np.array([int(colour[i:i + 2], 16) for i in (1, 3, 5)], dtype=float)
    bright = float(rgb @ [0.299, 0.587, 0.114]) / 255
    shade = rgb * 0.5 if bright > 0.45 else rgb + (255 - rgb) * 0.55
    return "#" + "".join(f"{int(c):02X}" for c in shade)


@contextmanager
def _quiet_vtk():
    """Keep VTK's warnings (on a machine without a display it says "bad X server connection"
    before it falls back to off-screen rendering) out of the command's output; errors stay."""
    from vtkmodules.vtkCommonCore import vtkLogger, vtkObject

    cutoff = vtkLogger.GetCurrentVerbosityCutoff()
    shown = vtkObject.GetGlobalWarningDisplay()
    vtkLogger.SetStderrVerbosity(vtkLogger.VERBOSITY_ERROR)
    vtkObject.GlobalWarningDisplayOff()
    try:
        yield
    finally:
        vtkLogger.SetStderrVerbosity(vtkLogger.ConvertToVerbosity(cutoff))
        vtkObject.SetGlobalWarningDisplay(shown)
