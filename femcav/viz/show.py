"""Pictures of a result folder, made from its saved files (modes.json and fields.vtu)
without solving again: ``femcav show OUTDIR [--mode K]`` writes mode_KK.png for each mode
(or the one asked for) and, for all modes, spectrum.png and report.html (one page with
the table, the pictures and the checks)."""

from __future__ import annotations

import json
from pathlib import Path

from ..errors import BrokenResultFolder, InputError
from ..io.atomic import read_manifest, staged_output
from ..units import format_frequency
from .mode_picture import draw_mode_picture


def show(folder: str | Path, *, mode: int | None = None, arrows: str = "E",
         field: str = "E") -> list[Path]:
    """Draw the pictures (and, for all modes, the spectrum and report); ``field``: the
    magnitude in colour, ``arrows``: the field of the arrows ("E" or "H" each)."""
    folder = Path(folder)
    document = read_modes_document(folder)
    modes = document["modes"]
    if mode is not None and not 1 <= mode <= len(modes):
        raise InputError(f"the folder has modes 1 to {len(modes)}, not {mode}", field="--mode")
    wanted = [row["index"] for row in modes if mode is None or row["index"] == mode]
    grid = read_fields(folder, wanted, arrows, field)
    walls = read_wall_losses(folder)
    from .far_field_picture import draw_far_field_picture, read_far_fields
    patterns = read_far_fields(folder) or {}
    written = []
    # redrawing every mode replaces all the pictures; one mode adds to them
    with staged_output(folder, kind="pictures",
                       replaces=("pictures",) if mode is None else ()) as files:
        if mode is None and modes:
            from .spectrum import write_spectrum
            files.write_with("spectrum.png", lambda p: write_spectrum(document, p),
                             suffix=".png")
            written.append(folder / "spectrum.png")
            written += _write_probe_plots(files, folder, document)
            from .port_response import has_response, write_response_plot
            if has_response(document):
                files.write_with("response.png", lambda p: write_response_plot(document, p),
                                 suffix=".png")
                written.append(folder / "response.png")
        for row in modes:
            if mode is not None and row["index"] != mode:
                continue
            title = picture_title(document, row)
            name = f"mode_{row['index']:02d}.png"
            files.write_with(name, lambda p, r=row, t=title: draw_mode_picture(
                grid, r["index"], t, p, arrows=arrows, field=field), suffix=".png")
            written.append(folder / name)
            if walls is not None and f"m{row['index']:02d}_loss" in walls.cell_data:
                from .wall_loss_picture import draw_wall_loss_picture

                name = f"wall_loss_{row['index']:02d}.png"
                files.write_with(name, lambda p, r=row, t=title: draw_wall_loss_picture(
                    walls, r["index"], t, p), suffix=".png")
                written.append(folder / name)
            if row["index"] in patterns:
                name = f"far_field_{row['index']:02d}.png"
                files.write_with(name, lambda p, r=row, t=title: draw_far_field_picture(
                    patterns[r["index"]], t, p), suffix=".png")
                written.append(folder / name)
    if mode is None:
        from .report import write_report

        pictures = {p.stem: p for p in written}
        with staged_output(folder, kind="pictures", replaces=()) as files:
            files.write_with("report.html", lambda p: write_report(document, pictures, p))
        written.append(folder / "report.html")
    return written


def mode_description(row: dict) -> str:
    """What is known of a mode's kind: its label, its azimuthal order and field class, its
    symmetry class; "" when nothing is."""
    parts = []
    if row.get("label"):
        parts.append(row["label"])
    if row.get("azimuthal_order") is not None:
        parts.append(f"m = {row['azimuthal_order']}, {row.get('field_class')}")
    elif row.get("field_class"):
        parts.append(row["field_class"])
    if row.get("symmetry"):
        parts.append(row["symmetry"])
    return "; ".join(dict.fromkeys(parts))


def picture_title(document: dict, row: dict) -> str:
    """The title of a mode's picture: the case, the mode number, frequency and kind."""
    kind = mode_description(row)
    return (f"{document.get('title', '')}\nmode {row['index']}: "
            f"{format_frequency(row['frequency_hz'], 7)}" + (f" ({kind})" if kind else ""))


def _write_probe_plots(files, folder: Path, document: dict) -> list[Path]:
    """probe_NAME.png for every line probe."""
    from .probe_plot import line_probe_names, write_probe_plot

    written = []
    for name in line_probe_names(document):
        files.write_with(f"probe_{name}.png", lambda p, n=name: write_probe_plot(document, n, p),
                         suffix=".png")
        written.append(folder / f"probe_{name}.png")
    return written


# what the pictures and the report read of every mode row of modes.json
_MODE_KEYS = {"index": int, "frequency_hz": (int, float), "residual": (int, float),
              "divergence": (int, float), "orthogonality": (int, float), "passed": bool}


def read_modes_document(folder: Path) -> dict:
    """modes.json of a result folder, checked for what show needs; BrokenResultFolder says
    what is wrong (InputError when the folder itself does not exist)."""
    if not folder.is_dir():
        raise InputError("no such folder (give a folder written by femcav solve)",
                         source=str(folder))
    table = folder / "modes.json"
    if not table.is_file():
        writers = sorted(set(read_manifest(folder).values()) - {"solve", "pictures"})
        others = sorted(p.name for p in folder.glob("*.json") if not p.name.startswith("."))
        kind = (f" (femcav {' and '.join(writers)} wrote it)" if writers else
                f" (it holds {', '.join(others)}: another command's results)" if others else "")
        raise BrokenResultFolder(folder, f"modes.json not found: not a femcav solve result "
                                         f"folder{kind}; femcav solve writes one")
    try:
        document = json.loads(table.read_text(encoding="utf-8"))
    except (ValueError, UnicodeDecodeError) as exc:
        raise BrokenResultFolder(folder, f"modes.json cannot be read ({exc}); solve the "
                                         "case again") from None
    if not isinstance(document, dict) or document.get("format") != "femcav-modes":
        raise BrokenResultFolder(folder, "modes.json is not a femcav mode table (no "
                                         '"format": "femcav-modes"); solve the case again')
    modes = document.get("modes")
    if not isinstance(modes, list):
        raise BrokenResultFolder(folder, "modes.json has no list of modes; solve the case "
                                         "again")
    for k, row in enumerate(modes, start=1):
        bad = [key for key, kind in _MODE_KEYS.items()
               if not isinstance(row, dict) or not isinstance(row.get(key), kind)
               or (kind is not bool and isinstance(row.get(key), bool))]
        if bad:
            raise BrokenResultFolder(folder, f"modes.json: mode entry {k} lacks a valid "
                                             f"{', '.join(bad)}; solve the case again")
    return document


def read_wall_losses(folder: Path):
    """wall_loss.vtu read with pyvista, or None when the folder has none (no metal walls)
    or it cannot be read (then its pictures are left out; the field pictures stay)."""
    path = folder / "wall_loss.vtu"
    if not path.is_file():
        return None
    import pyvista as pv
    from vtkmodules.vtkCommonCore import vtkObject

    shown = vtkObject.GetGlobalWarningDisplay()
    vtkObject.GlobalWarningDisplayOff()
    try:
        walls = pv.read(path)
    except Exception:  # noqa: BLE001 - VTK's readers raise many kinds
        return None
    finally:
        vtkObject.SetGlobalWarningDisplay(shown)
    return walls if getattr(walls, "n_cells", 0) else None


def read_fields(folder: Path, indices: list[int], arrows: str, field: str = "E"):
    """fields.vtu with the arrays the pictures of ``indices`` need, or BrokenResultFolder;
    a distributed solve's fields.pvtu (its pieces read as one grid) where there is no .vtu."""
    fields = folder / "fields.vtu"
    if not fields.is_file() and (folder / "fields.pvtu").is_file():
        fields = folder / "fields.pvtu"
    if not fields.is_file():
        raise BrokenResultFolder(folder, "fields.vtu not found (the fields of the modes); "
                                         "solve the case again")
    import pyvista as pv
    from vtkmodules.vtkCommonCore import vtkObject

    # a damaged file makes VTK print its own error lines; the one line below says it all
    shown = vtkObject.GetGlobalWarningDisplay()
    vtkObject.GlobalWarningDisplayOff()
    try:
        grid = pv.read(fields)
    except Exception as exc:  # noqa: BLE001 - VTK's readers raise many kinds
        raise BrokenResultFolder(folder, f"fields.vtu cannot be read ({exc}); solve the "
                                         "case again") from None
    finally:
        vtkObject.SetGlobalWarningDisplay(shown)
    if getattr(grid, "n_cells", 0) == 0:
        raise BrokenResultFolder(folder, "fields.vtu holds no cells (damaged or cut "
                                         "short); solve the case again")
    needed = ["region"] + [f"m{k:02d}_{name}" for k in indices
                           for name in dict.fromkeys((field, arrows))]
    missing = [name for name in needed if name not in grid.cell_data]
    if missing:
        shown_names = ", ".join(missing[:4]) + (" ..." if len(missing) > 4 else "")
        raise BrokenResultFolder(folder, f"fields.vtu lacks the arrays {shown_names} "
                                         "(it belongs to another result or is damaged); "
                                         "solve the case again")
    return grid
