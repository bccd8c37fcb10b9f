"""Export runs: the files of every rate in one format, their names, and the manifest.

Files are written per rate (JSON, CSV, text or one WAV impulse response per
band) and one manifest per export ties them to the project's content hash
and to the check results at each rate. Every band gets a file name of its
own (:func:`band_file_stems`) and no run writes one path twice
(:class:`RunFiles`); every file is written atomically.

References
----------
.. [1] FIPS PUB 180-4, "Secure Hash Standard", NIST, 2015 (SHA-256).
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import unicodedata
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Sequence

from planner import __version__, project as pj
from planner.audio.wav import write_wav
from planner.dsp import fixed as qz
from planner.engine import delays as dl
from planner.engine import rounding
from planner.errors import ExportError
from planner.export.formats import (FORMATS, band_impulse_response, denominator_text,
                                    to_csv_text, to_json_dict, to_text)
from planner.export.rate import RateExport, check_rate, export_rate, rate_value
from planner.jsonio import atomic_write, atomic_write_text, dumps, make_folder, os_error_text
from planner.model import Project

__all__ = ["MANIFEST_FORMAT", "MAX_SLUG_CHARS", "MAX_STEM_BYTES", "short_stem", "RESERVED_STEMS", "slug", "band_file_stems",
           "RunFiles", "write_file", "write_text_file", "rate_text", "content_hash", "driver_records",
           "ExportResult", "coefficient_text", "write_export", "export_formats", "merge_manifest",
           "file_sha256", "EXTENSIONS"]


MANIFEST_FORMAT = "crossplan-export-manifest"


#: Longest slug in a file name, characters (a project's and a band's alike): with the
#: rate, the dashes, a band number and the extension a name stays far below the
#: 255 bytes most file systems allow.
MAX_SLUG_CHARS = 64


#: Band file stems a run keeps for itself: render's summed output and the manifest.
RESERVED_STEMS = ("sum", "manifest")


def slug(text: str, fallback: str = "project", max_chars: int = MAX_SLUG_CHARS) -> str:
    """Lower-case ASCII letters, digits and dashes, for file names.

    Accents are taken off first (Unicode NFKD decomposition: ``'Médium'``
    gives ``'medium'``); any other run of characters becomes one dash. The
    result is cut to ``max_chars`` (no dash at either end); ``fallback``
    when nothing is left.
    """
    plain = "".join(c for c in unicodedata.normalize("NFKD", str(text))
                    if not unicodedata.combining(c))
    s = re.sub(r"[^a-z0-9]+", "-", plain.lower()).strip("-")
    s = s[:max(1, int(max_chars))].strip("-")
    return s or fallback


#: Longest file stem taken from a user's file name (bytes of UTF-8): with a band's slug, the
#: dashes and the extension the whole name stays below the 255 bytes most file systems allow.
MAX_STEM_BYTES = 120


def short_stem(stem: str, max_bytes: int = MAX_STEM_BYTES) -> str:
    """``stem`` itself when it fits in ``max_bytes`` of UTF-8, else its start and a short hash.

    The cut keeps whole characters and ends in ``-`` and the first 8 hex digits
    of the SHA-256 of the whole stem, so two long stems alike in their start
    stay apart and the same stem always gives the same name.
    """
    raw = stem.encode("utf-8", "surrogateescape")
    if len(raw) <= max_bytes:
        return stem
    digest = hashlib.sha256(raw).hexdigest()[:8]
    head = raw[:max_bytes - 9].decode("utf-8", "ignore")
    return f"{head}-{digest}"


def band_file_stems(names: Sequence[str], reserved: Sequence[str] = RESERVED_STEMS) -> list[str]:
    """A distinct, readable file stem per band, the same in every run of the same names.

    Each band takes :func:`slug` of its name (at most :data:`MAX_SLUG_CHARS`
    characters). A band whose slug is empty (a name of other than Latin
    letters and digits), is one of ``reserved``, or is shared with another
    band (``Woofer`` and ``woofer``; ``mid range`` and ``mid-range``; two
    long names alike in their first characters) gets its band number
    (1-based) after it: ``band-3``, ``sum-2``, ``woofer-1`` and
    ``woofer-2``. Should that name be taken as well, ``-2``, ``-3``, ...
    follow it. Comparisons ignore case, as some file systems do.

    Parameters
    ----------
    names : sequence of str
        Band names, project order.
    reserved : sequence of str
        Stems no band may take alone.

    Returns
    -------
    list of str
        One stem per band, no two alike (ignoring case).
    """
    bases = [slug(n, fallback="") for n in names]
    keep = {r.lower() for r in reserved}
    count: dict[str, int] = {}
    for b in bases:
        count[b] = count.get(b, 0) + 1
    alone = [bool(b) and count[b] == 1 and b not in keep for b in bases]
    taken = {b for b, ok in zip(bases, alone) if ok}
    out = []
    for k, (b, ok) in enumerate(zip(bases, alone), start=1):
        if ok:
            out.append(b)
            continue
        stem = f"{b or 'band'}-{k}"
        j = 2
        while stem in taken:
            stem = f"{b or 'band'}-{k}-{j}"
            j += 1
        taken.add(stem)
        out.append(stem)
    return out


class RunFiles:
    """The files of one run (an export, a render): no path is written twice.

    :meth:`claim` records each path with what it is for; claiming a path a
    second time (case ignored, as some file systems do) raises, naming
    both, so that no file written earlier in the run is overwritten.
    """

    def __init__(self) -> None:
        self._what: dict[str, tuple[Path, str]] = {}

    def claim(self, path, what: str) -> Path:
        """Record ``path`` for ``what`` (e.g. ``"band 'woofer' at 48000 Hz"``) and return it.

        Raises
        ------
        ExportError
            ``field='out'``: ``path`` is claimed already in this run.
        """
        p = Path(path)
        key = os.path.normcase(os.path.abspath(p)).lower()
        if key in self._what:
            raise ExportError(f"{str(p)!r} would be written twice in one run, for "
                              f"{self._what[key][1]} and for {what}; nothing is written over",
                              field="out")
        self._what[key] = (p, what)
        return p


def write_file(path: Path, write) -> None:
    """``write(tmp)`` then rename over ``path`` (atomic); an OSError as an ExportError.

    Raises
    ------
    ExportError
        ``field='out'``: the file cannot be written (a name too long for the
        file system, no space, no permission), with the system's reason.
    """
    try:
        atomic_write(Path(path), write)
    except OSError as e:
        raise ExportError(f"cannot write {os_error_text(e)}", field="out") from None


def write_text_file(path: Path, text: str) -> None:
    """:func:`planner.jsonio.atomic_write_text`, with an OSError as an ExportError (as
    :func:`write_file`)."""
    try:
        atomic_write_text(path, text)
    except OSError as e:
        raise ExportError(f"cannot write {os_error_text(e)}", field="out") from None


def rate_text(fs_hz: float) -> str:
    """A rate as written in file names: ``48000``, ``44100``, ``22050.5`` as ``22050p5``."""
    return str(int(fs_hz)) if float(fs_hz).is_integer() else repr(float(fs_hz)).replace(".", "p")


def driver_records(project: Project) -> list[dict]:
    """The drivers the checks were made with: per band its model, or its file and content hash.

    A measurement file can change under the same name; its SHA-256 (FIPS
    180-4) ties an export to the data it was checked against.
    """
    out = []
    for b in project.bands:
        d = b.driver
        if d is None:
            continue
        if d.data is not None:
            out.append({"band": b.name, "file": d.data.path, "content_hash": d.data.sha256})
        else:
            out.append({"band": b.name, "model": d.model, "params": dict(d.params)})
    return out


def content_hash(project: Project) -> str:
    """``'sha256:<hex>'`` of the project's canonical JSON (sorted keys, no blanks, UTF-8).

    The canonical JSON is :func:`planner.project.to_dict` written with
    ``sort_keys=True`` and separators ``(',', ':')``, so formatting and key
    order of the file on disk do not change it; any value that changes the
    design does (SHA-256, FIPS 180-4).
    """
    text = json.dumps(pj.to_dict(project), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False, default=list)
    return "sha256:" + hashlib.sha256(text.encode("utf-8")).hexdigest()


@dataclass
class ExportResult:
    """What :func:`write_export` did.

    ``band_files`` holds per rate (the order of ``rates``) each band's file
    of the run's first format, project order; ``delays`` per rate how the WAV impulse responses made
    the band delays (:class:`planner.delays.DelayPlan`; ``None`` for the
    coefficient formats, which hold the exact ``delay_samples``); ``notes``
    the lines on fractional delays for the command's output.
    """

    rates: list[RateExport]
    files: list[Path]
    manifest: Path | None
    arith_ok: bool
    checks_ok: bool
    band_files: list[list[Path]] = field(default_factory=list)
    delays: list = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    #: the formats of the run, in order, and the files written in each
    formats: list[str] = field(default_factory=list)
    files_by_format: dict = field(default_factory=dict)


def coefficient_text(rx: RateExport, fmt: str, negate_feedback: bool) -> str:
    if fmt == "json":
        return json.dumps(to_json_dict(rx, negate_feedback), indent=1) + "\n"
    if fmt == "csv":
        return to_csv_text(rx, negate_feedback)
    return to_text(rx, negate_feedback)


def export_formats(fmt) -> list[str]:
    """The formats of one run: ``"json"``, ``"json,csv"`` or a sequence of names, in order.

    Repeats are dropped (first one kept).

    Raises
    ------
    ExportError
        ``field='format'``: an unknown name, or none at all.
    """
    parts = fmt.split(",") if isinstance(fmt, str) else [
        x for f in fmt for x in str(f).split(",")]
    out = list(dict.fromkeys(x.strip() for x in parts if x.strip()))
    if not out:
        raise ExportError(f"must be one of {', '.join(FORMATS)}, not {fmt!r}", field="format")
    for f in out:
        if f not in FORMATS:
            raise ExportError(f"must be one of {', '.join(FORMATS)}, not {f!r}", field="format")
    return out


#: File extension of each coefficient format.
EXTENSIONS = {"json": "json", "csv": "csv", "text": "txt", "wav": "wav"}


def file_sha256(path) -> str:
    """``'sha256:<hex>'`` of a file's bytes (FIPS 180-4)."""
    return "sha256:" + hashlib.sha256(Path(path).read_bytes()).hexdigest()


def write_export(project: Project, rates: Sequence[float], fmt, out_dir,
                 arith: str = "float64", negate_feedback: bool = False,
                 pre_attenuate: bool = False, source: str | None = None,
                 sections: str = "per-filter",
                 fractional_delay: str = "apply") -> ExportResult:
    """Export ``project`` at every rate in one or more formats, with a manifest.

    Files: ``DIR/<project>-<rate>.json|.csv|.txt``, or for ``wav`` one
    ``DIR/<project>-<rate>-<band>.wav`` per band (32-bit float, mono), and
    ``DIR/<project>-manifest.json``; ``<project>`` is :func:`slug` of the
    project's name and ``<band>`` the band's stem from
    :func:`band_file_stems` (distinct for every band). ``fmt`` is one
    format or several (:func:`export_formats`: ``"json,csv"`` or a list);
    the design is made and checked once per rate for all of them. Nothing
    is written when the target arithmetic cannot hold the design at some
    rate (``arith_ok`` false), and no file is written twice
    (:class:`RunFiles`).

    The manifest lists every file of this project's exports present in the
    folder (:func:`merge_manifest`): the entries of earlier runs are kept
    unless this run wrote the same file, so exporting ``csv`` after ``json``
    into one folder keeps both sets, each with its format, settings, SHA-256
    and its run's check results.

    ``fractional_delay`` (``"apply"`` or ``"round"``, see
    :mod:`planner.delays`) says how the WAV impulse responses make a
    fractional delay; coefficient files always hold the exact
    ``delay_samples``.

    Raises
    ------
    ExportError
        Unknown format or fractional-delay mode, no rates, a bad rate or
        format name, an output folder that cannot be made, a file that
        cannot be written (then ``written`` on the error lists the files
        this run had written before it).
    ProjectError
        A filter that cannot be made at a rate (named).
    """
    fmts = export_formats(fmt)
    dl.check_mode(fractional_delay)
    if not rates:
        raise ExportError("give at least one sample rate", field="rate")
    a = qz.parse_arith(arith)
    uniq = list(dict.fromkeys(float(check_rate(r)) for r in rates))
    exports = [export_rate(project, r, a, pre_attenuate, sections) for r in uniq]
    arith_ok = all(rx.arith_ok for rx in exports)
    checks_ok = all(rx.report.ok for rx in exports)
    if not arith_ok:
        return ExportResult(exports, [], None, False, checks_ok)
    out = Path(out_dir)
    base = slug(project.name)
    names = [b.name for b in project.bands]
    stems = band_file_stems(names)
    run = RunFiles()
    # Every path is named and claimed before anything is written.
    by_fmt: dict[str, list[list[Path]]] = {}
    plans: list = []
    for f in fmts:
        by_fmt[f] = []
        for rx in exports:
            stem = f"{base}-{rate_text(rx.fs_hz)}"
            at = f"at {rx.fs_hz:g} Hz"
            if f == "wav":
                by_fmt[f].append([run.claim(out / f"{stem}-{st}.wav", f"band {n!r} {at}")
                                  for n, st in zip(names, stems)])
            else:
                p = run.claim(out / f"{stem}.{EXTENSIONS[f]}", f"the {f} coefficients {at}")
                by_fmt[f].append([p] * len(names))
    for rx in exports:
        plans.append(dl.plan_delays([b.delay_samples for b in rx.bands], fractional_delay)
                     if "wav" in fmts else None)
    mpath = run.claim(out / f"{base}-manifest.json", "the manifest")
    try:
        make_folder(out)
    except OSError as e:
        raise ExportError(f"cannot make the folder {os_error_text(e)}", field="out") from None
    files: list[Path] = []
    entries: list[dict] = []
    wav_infos: list[list[dict]] = [[] for _ in exports]
    notes: list[str] = []
    try:
        for f in fmts:
            for i, (rx, paths, plan) in enumerate(zip(exports, by_fmt[f], plans)):
                if f == "wav":
                    for b, p, bd in zip(rx.bands, paths, plan.bands):
                        h, _ = band_impulse_response(b, rx.fs_hz, bd)
                        write_file(p, lambda t, h=h: write_wav(t, h, rx.fs_hz))
                        files.append(p)
                        entries.append(_entry(p, f, rx, b.name))
                        wav_infos[i].append({
                            "file": p.name, "samples": len(h),
                            "delay_whole_samples": bd.whole_samples,
                            "delay_fraction_applied_samples": bd.fraction_samples,
                            "delay_rounded_by_samples": bd.rounded_by_samples})
                    notes.extend(rounding.run_notes(rx.report, plan))
                else:
                    write_text_file(paths[0], coefficient_text(rx, f, negate_feedback))
                    files.append(paths[0])
                    entries.append(_entry(paths[0], f, rx, None))
                    notes.extend(n for n in rounding.exact_notes(rx.report) if n not in notes)
    except ExportError as e:
        e.written = list(files)
        raise
    rate_entries = [_manifest_rate(rx, [by_fmt[f][i] for f in fmts], fmts, wav_infos[i],
                                   plans[i] if "wav" in fmts else None)
                    for i, rx in enumerate(exports)]
    now = datetime.now(timezone.utc).isoformat(timespec="seconds")
    settings = {"arith": a.name, "negated_feedback": bool(negate_feedback),
                "pre_attenuate": bool(pre_attenuate), "sections": sections,
                "denominator": denominator_text(negate_feedback)}
    this_run = {
        "created_utc": now, "crossplan_version": __version__,
        "project": project.name, "project_file": source,
        "content_hash": content_hash(project), "file_formats": list(fmts), **settings,
        "fractional_delay": fractional_delay if "wav" in fmts else "exact",
        "rates": [rate_value(r) for r in uniq],
        "checks_ok": bool(checks_ok),
        "checks": rate_entries,
    }
    manifest = {
        "format": MANIFEST_FORMAT, "version": 1,
        "project": project.name, "project_file": source,
        "content_hash": this_run["content_hash"],
        "crossplan_version": __version__,
        "created_utc": now,
        "file_format": ",".join(fmts), "file_formats": list(fmts), **settings,
        "fractional_delay": this_run["fractional_delay"],
        "rates": this_run["rates"],
        "files": [p.name for p in files],
        "drivers": driver_records(project),
        "checks": rate_entries,
    }
    manifest, mnotes = merge_manifest(mpath, manifest, this_run, entries)
    notes.extend(mnotes)
    text = dumps(manifest, indent=1)
    try:
        write_text_file(mpath, text)
    except ExportError as e:
        e.written = list(files)
        raise
    band_files = by_fmt[fmts[0]]
    return ExportResult(exports, files, mpath, arith_ok, checks_ok, band_files, plans, notes,
                        formats=list(fmts), files_by_format={f: [p for ps in by_fmt[f] for p in
                                                                 dict.fromkeys(ps)]
                                                             for f in fmts})


def _entry(path: Path, fmt: str, rx: RateExport, band: str | None) -> dict:
    """The manifest's record of one file this run wrote (its run is filled in by the merge)."""
    return {"file": path.name, "format": fmt, "sample_rate": rate_value(rx.fs_hz),
            "band": band, "bytes": path.stat().st_size, "sha256": file_sha256(path),
            "check_ok": bool(rx.report.ok)}


def merge_manifest(path: Path, manifest: dict, this_run: dict,
                   entries: list[dict]) -> tuple[dict, list[str]]:
    """The manifest to write: this run's, plus what an earlier one at ``path`` lists still.

    ``manifest["entries"]`` lists every file of the folder's exports of this
    project: this run's ``entries``, then each entry of the earlier
    manifest whose file this run did not write and which is still present
    (its recorded SHA-256 is kept as it was; a file changed since then
    shows as a mismatch when checked). ``manifest["runs"]`` holds each run
    that still has a file listed, numbered (``id``), with its settings and
    check results; every entry names its run (``run``) and carries its
    settings (``arith``, ``sections``, ``negated_feedback``,
    ``pre_attenuate``, ``fractional_delay``), the project's ``content_hash``
    and the file's own ``sha256`` and ``bytes``. The top-level keys
    other than ``entries`` and ``runs`` describe this run only, as before.

    An earlier manifest that cannot be read, or that is not a crossplan
    manifest, is replaced; the note returned says so.
    """
    notes: list[str] = []
    old_entries: list[dict] = []
    old_runs: list[dict] = []
    if path.exists():
        try:
            old = json.loads(path.read_text(encoding="utf-8"))
            if not isinstance(old, dict) or old.get("format") != MANIFEST_FORMAT:
                raise ValueError("not a crossplan export manifest")
            old_entries = [e for e in old.get("entries", []) if isinstance(e, dict)]
            old_runs = [r for r in old.get("runs", []) if isinstance(r, dict)]
            if not old_entries and isinstance(old.get("files"), list):
                # A manifest from before entries were kept: its files, as one run.
                run0 = {k: old.get(k) for k in ("created_utc", "crossplan_version", "project",
                                                "project_file", "content_hash", "arith",
                                                "negated_feedback", "pre_attenuate",
                                                "sections", "fractional_delay", "rates",
                                                "checks")}
                run0["file_formats"] = [old.get("file_format")]
                run0["id"] = 1
                old_runs = [run0]
                old_entries = [{"file": n, "format": old.get("file_format"), "sha256": None,
                                "run": 1} for n in old["files"] if isinstance(n, str)]
        except (OSError, ValueError) as e:
            notes.append(f"the earlier manifest {path.name} could not be read ({e}); "
                         "it is replaced by this run's")
            old_entries, old_runs = [], []
    run_id = 1 + max((int(r.get("id", 0)) for r in old_runs
                      if isinstance(r.get("id", 0), int)), default=0)
    mine = {e["file"].lower() for e in entries}
    kept = [e for e in old_entries if isinstance(e.get("file"), str)
            and e["file"].lower() not in mine and (path.parent / e["file"]).is_file()]
    used = {e.get("run") for e in kept}
    runs = [r for r in old_runs if r.get("id") in used]
    runs.append({"id": run_id, **this_run})
    manifest = dict(manifest)
    manifest["run"] = run_id
    same = {k: this_run.get(k) for k in ("content_hash", "created_utc", "arith", "sections",
                                         "negated_feedback", "pre_attenuate")}
    manifest["entries"] = [{**e, **same, "fractional_delay": (this_run.get("fractional_delay")
                                                              if e["format"] == "wav"
                                                              else "exact"), "run": run_id}
                           for e in entries] + kept
    manifest["runs"] = runs
    return manifest, notes


def _manifest_rate(rx: RateExport, paths_by_fmt: Sequence[Sequence[Path]],
                   fmts: Sequence[str], wav_info: Sequence[dict], plan) -> dict:
    """One rate's entry of the manifest: the check, and per band its file and figures.

    ``file`` (per band) and ``band_files`` name the file of the run's first
    format; ``files`` (per band) and ``band_files_by_format`` every format's.
    With ``wav`` among the formats, ``delays`` is the WAV files' plan (the
    coefficient files of the same run still hold the exact delay).

    ``delays`` says how the band delays were made at this rate: for the
    WAV format the run's :class:`planner.delays.DelayPlan` (``apply`` or
    ``round``, the fraction per band, the added latency, the filter, and
    for ``round`` what rounding cost); for the coefficient formats
    ``"exact"``: the files hold ``delay_samples`` as designed.
    """
    names = [b.name for b in rx.bands]
    paths = paths_by_fmt[0]
    bands = []
    for i, (b, p) in enumerate(zip(rx.bands, paths)):
        d = {"name": b.name, "file": p.name,
             "files": {f: ps[i].name for f, ps in zip(fmts, paths_by_fmt)},
             "sections": len(b.stored_sos),
             "post_shifts": list(b.shifts),
             "fir_taps": 0 if b.stored_fir is None else len(b.stored_fir),
             "peak_internal_gain_db": b.peak_internal_gain_db,
             "pre_attenuation_db": b.pre_attenuation_db, "arith": b.arith.to_dict()}
        if wav_info:
            d["wav"] = wav_info[i]
        bands.append(d)
    if plan is None:
        exact = dl.plan_delays([b.delay_samples for b in rx.bands], "round")
        delays = {"fractional_delay": "exact", "added_latency_samples": 0,
                  "added_latency_ms": 0.0, "filter": None,
                  "bands": [{"name": n, "delay_samples": bd.delay_samples,
                             "fraction_samples": dl.fraction_of(bd.delay_samples)}
                            for n, bd in zip(names, exact.bands)],
                  "rounding": None}
    else:
        delays = plan.to_dict(names, rx.fs_hz)
        delays["rounding"] = (rounding.rounding_effect(rx.report, plan.rounded_delays).to_dict()
                              if plan.mode == "round" and plan.fractional else None)
    return {"sample_rate": rate_value(rx.fs_hz), "check": rx.report.to_dict(),
            "arith_ok": rx.arith_ok, "delays": delays, "bands": bands,
            "band_files": {b.name: p.name for b, p in zip(rx.bands, paths)},
            "band_files_by_format": {f: {b.name: p.name for b, p in zip(rx.bands, ps)}
                                     for f, ps in zip(fmts, paths_by_fmt)}}
