"""``hearnav scenes``: list, check, show and build scenes."""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

import numpy as np

from hearnav.cli.paths import output_file
from hearnav.errors import ConfigError, SceneError, shown_path

#: pyroomacoustics threads are capped here whatever the CPU count (AcousticSettings.n_threads allows no more).
MAX_THREADS = 64


def register(sub) -> None:
    """Add the ``scenes`` subcommand group."""
    p = sub.add_parser("scenes", help="list, check, draw and build scenes",
                       description="Work with the bundled scenes or your own scene files.")
    ss = p.add_subparsers(dest="scenes_command", metavar="ACTION", required=True)

    ls = ss.add_parser("list", help="table of scenes: split, area, cells, spots, RT60 estimate")
    ls.add_argument("--split", choices=["train", "val", "test"], help="only this split")
    ls.set_defaults(run=run_list)

    ck = ss.add_parser("check", help="validate scene files; exit 1 with one line per problem")
    ck.add_argument("files", nargs="*", type=Path, help="YAML files (default: every bundled scene)")
    ck.set_defaults(run=run_check)

    sh = ss.add_parser("show", help="draw a scene's plan to an image")
    sh.add_argument("name", help="scene name or path to a YAML file")
    sh.add_argument("--out", type=Path, required=True,
                    help="output image, e.g. plan.png or plan.svg (a folder: FOLDER/<scene>.png)")
    sh.set_defaults(run=run_show)

    bd = ss.add_parser("build", help="precompute and cache binaural responses")
    bd.add_argument("names", nargs="*", help="scene names or YAML files (default: the default scene)")
    bd.add_argument("--split", choices=["train", "val", "test"], help="every scene of a split")
    bd.add_argument("--threads", type=int, default=1,
                    help=f"pyroomacoustics threads, 1 to the CPU count (at most {MAX_THREADS}; default 1)")
    bd.set_defaults(run=run_build)


def scene_argument(name: str):
    """A scene from a bundled name, a generator name (gen-<seed>) or a YAML path."""
    from hearnav.scene import load_scene
    from hearnav.scene.library import load_named

    if name.endswith((".yaml", ".yml")) or Path(name).is_file():
        return load_scene(name)
    return load_named(name)


def _eyring_mid(scene) -> float:
    """Eyring's estimate, mean of the 500 Hz and 1 kHz bands (as the measured value)."""
    from hearnav.physics.decay import mid_t30
    from hearnav.scene.materials import BAND_CENTERS_HZ

    return mid_t30(scene.eyring_rt60(), BAND_CENTERS_HZ)


def _measured_mid(scene, settings) -> str:
    """The measured T30 (500 Hz / 1 kHz mean) recorded in the scene's cache, or why there is none."""
    from hearnav.acoustics.measured import cached_rt60
    from hearnav.physics.decay import mid_t30
    from hearnav.scene.materials import BAND_CENTERS_HZ

    per_band = cached_rt60(scene, settings)
    if per_band is None:
        return "not built"
    mid = mid_t30(per_band, BAND_CENTERS_HZ)
    return f"{mid:.2f}" if np.isfinite(mid) else "too short"


def run_list(args) -> int:
    from hearnav.acoustics.settings import AcousticSettings
    from hearnav.scene.grid import build_grid
    from hearnav.scene.library import load_all

    settings = AcousticSettings()  # what `scenes build` uses
    rows = []
    scenes, failed = load_all(args.split)
    for scene in scenes:
        grid = build_grid(scene)
        rows.append((scene.name, scene.split, f"{scene.floor_area:.1f}", str(grid.n_cells), str(len(scene.spots)),
                     f"{_eyring_mid(scene):.2f}", _measured_mid(scene, settings)))
    header = ("name", "split", "area_m2", "cells", "spots", "eyring_s", "t30_s")
    _print_table(header, rows)
    print("RT60 at 500 Hz and 1 kHz (mean). eyring_s: Eyring's estimate from the materials. t30_s: Schroeder T30 "
          "of the scene's rendered responses at a few cells, recorded by `hearnav scenes build` (\"not built\" "
          "until then).")
    for line in failed:
        print(f"hearnav: {line}", file=sys.stderr)
    return 1 if failed else 0


def _print_table(header: tuple[str, ...], rows: list[tuple[str, ...]]) -> None:
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(header)]
    print("  ".join(h.ljust(w) for h, w in zip(header, widths)))
    for r in rows:
        print("  ".join(v.ljust(w) for v, w in zip(r, widths)))


def run_check(args) -> int:
    from hearnav.scene import load_scene
    from hearnav.scene.library import scene_files

    files = args.files or scene_files()
    bad = 0
    for f in files:
        try:
            load_scene(f)
            print(f"ok: {f}")
        except SceneError as exc:
            bad += 1
            for line in exc.problems:
                print(line)
    if bad:
        print(f"{bad} of {len(files)} scene files have problems", file=sys.stderr)
    return 1 if bad else 0


def image_formats() -> list[str]:
    """File suffixes (without the dot) the plan can be saved as: matplotlib's supported file types."""
    from matplotlib.figure import Figure

    return sorted(Figure().canvas.get_supported_filetypes())


def plan_path(out: Path, scene_name: str) -> Path:
    """Where ``scenes show --out OUT`` writes: OUT itself, or OUT/<scene>.png for an existing folder; raises
    ConfigError for a suffix matplotlib cannot write or a folder that cannot be made."""
    if out.is_dir():
        out = out / f"{scene_name}.png"
    formats = image_formats()
    suffix = out.suffix[1:].lower()
    if suffix not in formats:
        found = f"the suffix {shown_path(out.suffix)}" if suffix else "no suffix"
        raise ConfigError(f"--out {shown_path(out)}: expected an image file name ending in a supported format or an "
                          f"existing folder, found {found}; supported: {', '.join(formats)} (e.g. plan.png)")
    return output_file(out)


def run_show(args) -> int:
    from hearnav.plots.plan import save_plan
    from hearnav.scene.grid import build_grid

    scene = scene_argument(args.name)
    out = save_plan(scene, build_grid(scene), plan_path(args.out, scene.name))
    print(f"wrote {out}")
    return 0


def thread_count(requested: int) -> int:
    """``requested`` if it is 1 to the CPU count (at most MAX_THREADS); raises ConfigError."""
    top = min(MAX_THREADS, os.cpu_count() or 1)
    if not 1 <= requested <= top:
        raise ConfigError(f"--threads must be 1 to {top} (this machine's CPU count, {os.cpu_count()}, at most "
                          f"{MAX_THREADS}), got {requested}; use {top} or fewer")
    return requested


def run_build(args) -> int:
    from tqdm import tqdm

    from hearnav.acoustics import AcousticSettings, cache_path, load_or_build
    from hearnav.scene.grid import build_grid
    from hearnav.scene.library import DEFAULT_SCENE, scene_names

    settings = AcousticSettings(n_threads=thread_count(args.threads))
    names = list(args.names) or (scene_names(args.split) if args.split else [DEFAULT_SCENE])
    for name in names:
        scene = scene_argument(name)
        grid = build_grid(scene, settings.n_headings)
        t0 = time.perf_counter()
        with tqdm(total=grid.n_cells, desc=f"{scene.name}", unit="cell", file=sys.stderr,
                  disable=None) as bar:
            resp = load_or_build(scene, settings, grid, progress=bar.update)
        seconds = time.perf_counter() - t0
        path = cache_path(scene, settings)
        print(f"{scene.name}: {grid.n_cells} cells x {settings.n_headings} headings x {len(scene.spots)} spots, "
              f"responses {resp.length / resp.fs * 1000:.0f} ms at {resp.fs} Hz, "
              f"line of sight {resp.line_of_sight.mean() * 100:.0f}% of cell-spot pairs")
        t30 = " / ".join(f"{v:.2f} s" if v > 0 else "too short to measure" for v in resp.rt60[2:4])
        print(f"  RT60 measured, Schroeder T30 (500 Hz / 1 kHz): {t30}; Eyring estimate {_eyring_mid(scene):.2f} s")
        print(f"  cache {path} ({path.stat().st_size / 1e6:.1f} MB), {seconds:.1f} s")
    return 0
