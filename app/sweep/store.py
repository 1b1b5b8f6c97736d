"""The sweep folder: results that survive a killed process, and the CSV built from them.

Layout of ``OUT``::

    sweep.jsonl      source of truth: one JSON record per finished point, appended as a whole
                     line, flushed and fsync'ed; a re-run reads it to skip finished points. A
                     truncated last line (process killed mid-write) is cut off on the next open.
                     When a point appears twice (a failed point retried), the last record wins.
    sweep.csv        one row per point of the current sweep, appended as each point finishes;
                     rewritten atomically (temporary file, then rename) when a point brings a new
                     output key, and at the end in grid order
    sweep.json       manifest: the hash of the base design, the latest variations and the plot
                     files written; a folder holding a sweep of another base design or over other
                     varied keys is refused (unless ``fresh``: the earlier sweep's files are
                     removed first)
    points/ID.json   full summary of each ok or collapsed point (curves, audit, ...)
    plots/*.png      summary plots, written at the end; plots of an earlier run of the sweep that
                     this run did not write are removed (other files in plots/ are kept)

Hidden temporary files (``.*.tmp``) are left only by a killed process; the next sweep into the
folder, holding its lock, removes them.

CSV columns: ``point`` (index in the grid, from 0), ``point_id``, ``status``, one column per
varied input in SI (its unit in the name, ``backplate.hole_radius_m``), ``analysis.accuracy``
(unless varied), ``wall_time_s``, then every output key in the order first seen, then
``uncertainty.<key>`` columns (estimated relative discretisation error), ``cause`` (why a point
failed: input, environment or error, :mod:`diagap.sweep.faults`) and ``error`` last.
A point without some key leaves that cell empty.
"""
from __future__ import annotations

import csv
import hashlib
import io
import json
import logging
import os
import tempfile
from pathlib import Path
from typing import Iterable, Sequence

from diagap.sweep.faults import record_cause
from diagap.sweep.spec import SweepError, Variation

__all__ = ["SweepFolder", "CsvTable", "design_hash", "FORMAT"]

FORMAT = "diagap-sweep/1"
log = logging.getLogger(__name__)


def design_hash(design) -> str:
    """Hash of the physical base design (SI values; name, description and accuracy excluded)."""
    d = design.to_dict()
    for key in ("name", "description", "analysis"):
        d.pop(key, None)
    return hashlib.sha256(json.dumps(d, sort_keys=True, default=str).encode()).hexdigest()[:16]


def _atomic_write(path: Path, text: str) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


class SweepFolder:
    """``OUT`` of one sweep: manifest check, lock, the JSON-lines log and point files."""

    def __init__(self, out_dir: str | Path):
        self.root = Path(out_dir)
        self.jsonl = self.root / "sweep.jsonl"
        self.csv = self.root / "sweep.csv"
        self.manifest = self.root / "sweep.json"
        self.points = self.root / "points"
        self.plots = self.root / "plots"
        self._fh = None
        self._lock = None
        self._manifest: dict = {}
        self._plot_names: list[str] = []

    def _old_manifest(self) -> dict:
        if not self.manifest.exists():
            return {}
        try:
            old = json.loads(self.manifest.read_text(encoding="utf-8"))
            if not isinstance(old, dict):
                raise ValueError
            return old
        except (OSError, ValueError):
            raise SweepError(f"{self.manifest}: unreadable sweep manifest; choose another -o, or "
                             f"--fresh to replace the earlier sweep") from None

    def check(self, base_hash: str, paths: Iterable[str] | None = None,
              fresh: bool = False) -> None:
        """Refuse a folder that is a file, or (unless ``fresh``) holds a sweep of another base
        design or over other varied keys ``paths``. Writes nothing."""
        if self.root.exists() and not self.root.is_dir():
            raise SweepError(f"{self.root}: exists and is not a folder (choose another -o)")
        if fresh:
            return
        old = self._old_manifest()
        if old and old.get("design_hash") != base_hash:
            raise SweepError(f"{self.root}: holds a sweep of a different base design "
                             f"({old.get('design_name', '?')!r}); choose another -o, or --fresh "
                             f"to replace the earlier sweep")
        before = [v.get("path") for v in old.get("variations") or [] if isinstance(v, dict)]
        if old and paths is not None and before and set(before) != set(paths):
            raise SweepError(f"{self.root}: holds a sweep varying {', '.join(before)}, not "
                             f"{', '.join(paths)}; choose another -o, or --fresh to replace the "
                             f"earlier sweep")

    def open(self, manifest: dict, fresh: bool = False) -> dict[str, dict]:
        """Create and lock the folder (``fresh``: remove the earlier sweep's files), repair the
        log, write the manifest; return the records."""
        self.check(manifest["design_hash"], [v["path"] for v in manifest.get("variations", [])],
                   fresh)
        self.root.mkdir(parents=True, exist_ok=True)
        self._take_lock()
        self._remove_temporaries()
        if fresh:
            self._clear()
        old = self._old_manifest() if not fresh else {}
        self._plot_names = sorted(self._earlier_plots(old))
        records = self._read_log()
        self._write_manifest({**manifest, "plot_files": self._plot_names})
        self._fh = open(self.jsonl, "ab")
        return records

    def _write_manifest(self, manifest: dict) -> None:
        self._manifest = manifest
        _atomic_write(self.manifest, json.dumps(manifest, indent=2) + "\n")

    def _remove_temporaries(self) -> None:
        """Hidden temporary files of a killed sweep (this process holds the folder's lock)."""
        for folder in (self.root, self.points):
            for tmp in folder.glob(".*.tmp") if folder.is_dir() else ():
                tmp.unlink(missing_ok=True)

    def _earlier_plots(self, old: dict) -> set[str]:
        """Names of the sweep plots in plots/ written by earlier runs of this folder."""
        listed = {n for n in old.get("plot_files") or [] if isinstance(n, str) and "/" not in n
                  and "\\" not in n and not n.startswith(".")}
        if self.plots.is_dir():  # folders written before the manifest listed them
            listed |= {p.name for p in self.plots.iterdir() if "--" in p.name
                       and p.suffix in (".png", ".svg")}
        return {n for n in listed if (self.plots / n).is_file()}

    def _clear(self) -> None:
        """Remove the files of the earlier sweep in this folder (``fresh``); other files stay."""
        for name in self._earlier_plots(self._old_manifest_or_empty()):
            (self.plots / name).unlink(missing_ok=True)
        if self.points.is_dir():
            for p in self.points.glob("*.json"):
                p.unlink(missing_ok=True)
        for path in (self.jsonl, self.csv, self.manifest):
            path.unlink(missing_ok=True)
        for folder in (self.plots, self.points):
            try:
                folder.rmdir()  # only if now empty
            except OSError:
                pass

    def _old_manifest_or_empty(self) -> dict:
        try:
            return self._old_manifest()
        except SweepError:
            return {}

    def finish(self, plot_files: Sequence[Path]) -> None:
        """Remove the earlier plots that this run did not write; record the plots written."""
        names = {Path(p).name for p in plot_files}
        for name in set(self._plot_names) - names:
            (self.plots / name).unlink(missing_ok=True)
        self._plot_names = sorted(names)
        self._write_manifest({**self._manifest, "plot_files": self._plot_names})

    def close(self) -> None:
        if self._fh is not None:
            self._fh.close()
            self._fh = None
        if self._lock is not None:
            self._lock.close()  # releases the flock
            self._lock = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def _take_lock(self) -> None:
        try:
            import fcntl
        except ImportError:  # pragma: no cover - not POSIX: no advisory lock
            return
        fh = open(self.root / ".sweep.lock", "a")
        try:
            fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            fh.close()
            raise SweepError(f"{self.root}: another sweep is writing to this folder") from None
        self._lock = fh

    def _read_log(self) -> dict[str, dict]:
        """Finished records by point id; a truncated last line is cut off the file."""
        if not self.jsonl.exists():
            return {}
        data = self.jsonl.read_bytes()
        end = data.rfind(b"\n") + 1
        if end < len(data):
            log.warning("%s: ignoring a truncated last line (%d bytes)", self.jsonl,
                        len(data) - end)
            with open(self.jsonl, "r+b") as fh:
                fh.truncate(end)
                fh.flush()
                os.fsync(fh.fileno())
        records: dict[str, dict] = {}
        for n, line in enumerate(data[:end].splitlines(), start=1):
            try:
                rec = json.loads(line)
                records[rec["point_id"]] = rec
            except (ValueError, KeyError, TypeError):
                log.warning("%s:%d: ignoring an unreadable record", self.jsonl, n)
        return records

    def append(self, record: dict) -> dict:
        """Store one finished point: its full summary file, then one fsync'ed log line.

        Returns the record without its full summary (what the log and the CSV hold).
        """
        record = dict(record)
        summary = record.pop("summary", None)
        if summary is not None:
            self.points.mkdir(exist_ok=True)
            _atomic_write(self.points / f"{record['point_id']}.json",
                          json.dumps(summary, indent=1, allow_nan=False, default=str) + "\n")
        line = json.dumps(record, separators=(",", ":"), allow_nan=False, default=str) + "\n"
        self._fh.write(line.encode("utf-8"))
        self._fh.flush()
        os.fsync(self._fh.fileno())
        return record


class CsvTable:
    """``sweep.csv`` of the current sweep (see the module docstring for the columns)."""

    def __init__(self, path: Path, variations: Sequence[Variation], index_of: dict[str, int]):
        self.path = Path(path)
        self.variations = tuple(variations)
        self.index_of = index_of
        self.rows: dict[str, dict] = {}  # point id -> record, in the order added
        self.columns: list[str] = []

    def _head(self) -> list[str]:
        varied = {v.path for v in self.variations}
        acc = [] if "analysis.accuracy" in varied else ["analysis.accuracy"]
        return ["point", "point_id", "status", *(v.column for v in self.variations), *acc,
                "wall_time_s"]

    def _columns(self, records: Iterable[dict]) -> list[str]:
        outputs: dict[str, None] = {}
        unc: dict[str, None] = {}
        for rec in records:
            outputs.update(dict.fromkeys(rec.get("outputs", {})))
            unc.update(dict.fromkeys(f"uncertainty.{k}" for k in rec.get("uncertainty", {})))
        return [*self._head(), *outputs, *unc, "cause", "error"]

    def _row(self, rec: dict) -> dict:
        over = rec.get("overrides", {})
        row = {"point": self.index_of.get(rec["point_id"], ""), "point_id": rec["point_id"],
               "status": rec.get("status"), "wall_time_s": rec.get("wall_time_s"),
               "error": rec.get("error", ""), "analysis.accuracy": over.get("analysis.accuracy"),
               "cause": record_cause(rec) or ""}
        row.update({v.column: over.get(v.path) for v in self.variations})
        row.update(rec.get("outputs", {}))
        row.update({f"uncertainty.{k}": x for k, x in rec.get("uncertainty", {}).items()})
        return row

    def _text(self, records: Sequence[dict], header: bool) -> str:
        buf = io.StringIO()
        w = csv.DictWriter(buf, self.columns, extrasaction="ignore", lineterminator="\n")
        if header:
            w.writeheader()
        w.writerows(self._row(r) for r in records)
        return buf.getvalue()

    def rewrite(self, records: Iterable[dict]) -> None:
        """Replace the file with ``records`` (atomically); they become the table's rows."""
        self.rows = {r["point_id"]: r for r in records}
        self.columns = self._columns(self.rows.values())
        _atomic_write(self.path, self._text(list(self.rows.values()), header=True))

    def add(self, record: dict) -> None:
        """Append one finished point; rewrite the file for new columns or a replaced row."""
        pid = record["point_id"]
        if pid in self.rows or not self.path.exists() or \
                set(self._columns([record])) - set(self.columns):
            self.rewrite([*(r for k, r in self.rows.items() if k != pid), record])
            return
        self.rows[pid] = record
        with open(self.path, "a", encoding="utf-8", newline="") as fh:
            fh.write(self._text([record], header=False))
            fh.flush()
            os.fsync(fh.fileno())
