"""Two identical rectangular resonators coupled through a rectangular iris in their common
wall: the building block of an iris-coupled filter.

The first box fills 0 <= x <= width, 0 <= y <= height, 0 <= z <= length; a wall of
``wall_thickness`` follows, pierced by an iris of ``iris_width`` (along x) by ``iris_height``
(along y, default the full height), centred in x and y; the second box, equal to the first,
lies beyond the wall. One region, ``inside``; every outer surface is the wall ``enclosure``.
Symmetry planes: the mid-plane of the wall (z) and x = width/2 (the iris is centred).

With ``feed_iris_width``, each end wall (also ``wall_thickness`` thick) has a full-height
iris of that width, centred in x, into a feed guide of the boxes' cross-section and
``feed_length`` (default: half the box length); the feed guides' far faces are the walls
``feed_in`` (z lowest) and ``feed_out`` (z highest), to be made ports: the input and output
of a two-resonator filter section.
"""

from __future__ import annotations

from functools import partial

import numpy as np

from .params import Param, require
from .parts import Layout
from .solids import Box

PARAMETERS = {"width": Param(doc="each box along x"), "height": Param(doc="along y"),
              "length": Param(doc="each box along z"),
              "iris_width": Param(doc="the aperture along x"),
              "iris_height": Param(required=False, default=None,
                                   doc="the aperture along y (default: the full height)"),
              "wall_thickness": Param(doc="the common wall the iris pierces"),
              "feed_iris_width": Param(required=False, default=None,
                                       doc="an iris in each end wall into a feed guide ending "
                                           "in the walls feed_in and feed_out (default: "
                                           "closed ends)"),
              "feed_length": Param(required=False, default=None,
                                   doc="each feed guide along z (default: half the length)")}
REGIONS = ("inside",)
WALLS = ("enclosure",)
FEEDS = ("feed_in", "feed_out")


def wall_names(feed_iris_width=None, **_) -> tuple[str, ...]:
    """The feed guides' end faces, when the part has them."""
    return FEEDS if feed_iris_width is not None else ()


def layout(width, height, length, iris_width, iris_height, wall_thickness,
           feed_iris_width=None, feed_length=None) -> Layout:
    iris_height = height if iris_height is None else iris_height
    require(iris_width <= width, f"the iris ({iris_width:g} m) is wider than the box "
            f"({width:g} m)", "geometry.iris_width")
    require(iris_height <= height, f"the iris ({iris_height:g} m) is taller than the box "
            f"({height:g} m)", "geometry.iris_height")
    iris = Box(((width - iris_width) / 2, (height - iris_height) / 2, length),
               (iris_width, iris_height, wall_thickness))
    space = [Box((0, 0, 0), (width, height, length)), iris,
             Box((0, 0, length + wall_thickness), (width, height, length))]
    outer_wall = lambda points: "enclosure"
    feature = min(iris_width, iris_height, wall_thickness)
    if feed_iris_width is not None:
        require(feed_iris_width <= width, f"the feed iris ({feed_iris_width:g} m) is wider "
                f"than the box ({width:g} m)", "geometry.feed_iris_width")
        feed = length / 2 if feed_length is None else feed_length
        far = 2 * length + wall_thickness          # the second box's end wall starts here
        for start in (-wall_thickness, far):
            space.append(Box(((width - feed_iris_width) / 2, 0, start),
                             (feed_iris_width, height, wall_thickness)))
        space += [Box((0, 0, -wall_thickness - feed), (width, height, feed)),
                  Box((0, 0, far + wall_thickness), (width, height, feed))]
        outer_wall = partial(_feed_face, low=-wall_thickness - feed,
                             high=far + wall_thickness + feed,
                             tolerance=1e-7 * (far + 2 * feed))
        feature = min(feature, feed_iris_width)
    return Layout(space=space, background="inside", outer_wall=outer_wall,
                  feature_size=feature,
                  description=f"two boxes {width:g} x {height:g} x {length:g} m, iris "
                              f"{iris_width:g} x {iris_height:g} m"
                              + (f", feed irises {feed_iris_width:g} m"
                                 if feed_iris_width is not None else ""))


def _feed_face(points, low, high, tolerance) -> str:
    z = points[:, 2]
    if np.all(np.abs(z - low) < tolerance):
        return "feed_in"
    if np.all(np.abs(z - high) < tolerance):
        return "feed_out"
    return "enclosure"


def symmetry_planes(width, height, length, iris_width, iris_height, wall_thickness,
                    feed_iris_width=None, feed_length=None) -> dict[str, float]:
    return {"x": width / 2, "z": length + wall_thickness / 2}
