"""A benchmark run folder read for plotting: its rows, manifest and summary, with one-line errors."""

from __future__ import annotations

import json
import os
from dataclasses import dataclass
from pathlib import Path

from hearnav.bench.results import EPISODES_FILE, SUMMARY_FILE, ResultsError, read_manifest, read_rows
from hearnav.errors import ConfigError, did_you_mean, shown_path


@dataclass(frozen=True)
class Run:
    """What a run folder holds: its finished rows (file order), its manifest and its summary (None if missing)."""

    folder: Path
    rows: list[dict]
    manifest: dict
    summary: dict | None

    @property
    def ok_rows(self) -> list[dict]:
        """Rows of episodes that finished ``"ok"``."""
        return [r for r in self.rows if r.get("status") == "ok"]

    @property
    def policies(self) -> list[str]:
        """Policy names in a fixed order, so colours stay the same from figure to figure and run to run (rows
        arrive in the order workers finish): the reference, the other agents, then privileged policies, each by
        name."""
        names = set(str(r["policy"]) for r in self.rows)
        privileged = {str(r["policy"]) for r in self.rows if r.get("privileged")}
        return sorted(names, key=lambda p: (p != self.reference, p in privileged, p))

    @property
    def reference(self) -> str | None:
        """The summary's reference policy."""
        return (self.summary or {}).get("reference")


def load_run(folder: str | os.PathLike) -> Run:
    """Read a run folder written by ``hearnav bench``; raises a one-line error when it is none, or holds no rows."""
    folder = Path(folder)
    fix = "give the --out folder of a finished 'hearnav bench' run"
    if not folder.is_dir():
        found = "a file" if folder.exists() else "nothing there"
        raise ConfigError(f"RUN_DIR {shown_path(str(folder))}: expected a benchmark run folder, found {found}; {fix}")
    if not (folder / EPISODES_FILE).is_file():
        raise ConfigError(f"RUN_DIR {shown_path(str(folder))}: expected a benchmark run folder holding "
                          f"{EPISODES_FILE}, found none; {fix}")
    rows = read_rows(folder / EPISODES_FILE)
    if not rows:
        raise ConfigError(f"RUN_DIR {shown_path(str(folder))}: expected episode rows in {EPISODES_FILE}, found an "
                          f"empty file (the run finished no episode); rerun 'hearnav bench' into it")
    manifest = read_manifest(folder) or {}
    summary = None
    if (folder / SUMMARY_FILE).is_file():
        try:
            summary = json.loads((folder / SUMMARY_FILE).read_text(encoding="utf-8"))
        except ValueError:
            raise ResultsError(f"{folder / SUMMARY_FILE}: expected the run's summary as JSON, found unreadable text; "
                               f"rerun 'hearnav bench' into the folder to write it again") from None
    if not isinstance(summary, dict):
        summary = None
    return Run(folder, rows, manifest, summary)


def check_policies(run: Run, wanted: list[str] | None) -> list[str]:
    """The policies to draw: ``wanted`` (each checked against the run's) or all of the run's."""
    if not wanted:
        return run.policies
    for name in wanted:
        if name not in run.policies:
            raise ConfigError(f"--policy {name!r}: expected a policy of this run, found none with that name; "
                              f"{did_you_mean(name, run.policies)}")
    return list(dict.fromkeys(wanted))


def episode_indices(run: Run, episodes: str | None, first: int | None) -> list[int]:
    """Episode indices from ``--episodes 0,3,7`` or ``--first K`` (default the first 3), each checked."""
    present = sorted({int(r["episode_index"]) for r in run.rows if r.get("episode_index") is not None})
    if not present:
        raise ConfigError(f"RUN_DIR {shown_path(str(run.folder))}: expected rows with an episode_index, found none "
                          f"(written by an older version); rerun 'hearnav bench' into a new folder")
    if episodes is not None:
        try:
            chosen = [int(part) for part in episodes.split(",") if part.strip()]
        except ValueError:
            raise ConfigError(f"--episodes {episodes[:40]!r}: expected indices separated by commas such as 0,3,7; "
                              f"give whole numbers") from None
        missing = [k for k in chosen if k not in present]
        if missing or not chosen:
            raise ConfigError(f"--episodes: expected indices of this run's episodes ({present[0]}..{present[-1]}), "
                              f"found {missing[:5] or 'none'}; choose among those")
        return list(dict.fromkeys(chosen))
    k = 3 if first is None else first
    if k < 1:
        raise ConfigError(f"--first {k}: expected a positive number of episodes; give --first 1 or more")
    return present[:k]


def rows_of(run: Run, index: int, policies: list[str]) -> dict[str, dict]:
    """The ok rows of episode ``index`` by policy, in the order of ``policies``."""
    found = {r["policy"]: r for r in run.ok_rows if r.get("episode_index") == index}
    return {p: found[p] for p in policies if p in found}
