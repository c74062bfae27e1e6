"""Pictures of a result folder, made from its saved files (modes.json and fields.vtu)
without solving again: ``femcav show OUTDIR [--mode K]`` writes mode_KK.png for each mode
(or the one asked for) and, for all modes, spectrum.png and report.html (one page with
the table, the pictures and the checks)."""

from __future__ import annotations

import json
from pathlib import Path

from ..errors import InputError
from ..io.atomic import staged_output
from ..units import format_frequency
from .mode_picture import draw_mode_picture


def show(folder: str | Path, *, mode: int | None = None, arrows: str = "E") -> list[Path]:
    folder = Path(folder)
    table, fields = folder / "modes.json", folder / "fields.vtu"
    for needed in (table, fields):
        if not needed.is_file():
            raise InputError(f"{needed.name} not found: {folder} is not a femcav result folder "
                             "(femcav solve writes one)", source=str(folder))
    try:
        document = json.loads(table.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"modes.json cannot be read ({exc})", source=str(table)) from None
    modes = document.get("modes", [])
    if mode is not None and not 1 <= mode <= len(modes):
        raise InputError(f"the folder has modes 1 to {len(modes)}, not {mode}", field="--mode")
    import pyvista as pv

    grid = pv.read(fields)
    written = []
    with staged_output(folder) as files:
        if mode is None and modes:
            from .spectrum import write_spectrum
            files.write_with("spectrum.png", lambda p: write_spectrum(document, p),
                             suffix=".png")
            written.append(folder / "spectrum.png")
        for row in modes:
            if mode is not None and row["index"] != mode:
                continue
            label = row.get("field_class")
            if row.get("azimuthal_order") is not None:
                label = f"m = {row['azimuthal_order']}, {label}"
            title = (f"{document.get('title', '')}\nmode {row['index']}: "
                     f"{format_frequency(row['frequency_hz'], 7)}"
                     + (f" ({label})" if label else ""))
            name = f"mode_{row['index']:02d}.png"
            files.write_with(name, lambda p, r=row, t=title: draw_mode_picture(
                grid, r["index"], t, p, arrows=arrows), suffix=".png")
            written.append(folder / name)
    if mode is None:
        from .report import write_report

        pictures = {p.stem: p for p in written}
        with staged_output(folder) as files:
            files.write_with("report.html", lambda p: write_report(document, pictures, p))
        written.append(folder / "report.html")
    return written
