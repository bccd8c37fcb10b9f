"""WAV files: read as float samples in [-1, 1] (whole or in blocks), written as 32-bit float.

The reader is crossplan's own: it walks the RIFF chunks [1]_, takes the
``fmt `` chunk (PCM 8/16/24/32-bit, IEEE float 32/64, plain or
``WAVE_FORMAT_EXTENSIBLE``) and reads the ``data`` chunk straight from the
file, one block of frames at a time, so a long file is never held whole
(:func:`open_wav`, :meth:`WavInfo.blocks`). A header that does not match the
data (a data chunk declared longer than the file, a size that is not a
whole number of frames) is read as far as the data goes and said in
:attr:`WavInfo.notes`; a header that cannot be parsed is refused. Samples
that are not finite (NaN or infinite floats) are refused by
:func:`check_finite` with their count and where the first one is.

Whole files are written with :mod:`scipy.io.wavfile`; long outputs stream
through :class:`WavWriter` (a temporary file renamed over the target when
complete).

References
----------
.. [1] Microsoft / IBM, "Multimedia Programming Interface and Data
   Specifications 1.0", 1991 (RIFF WAVE; WAVE_FORMAT_PCM = 1,
   WAVE_FORMAT_IEEE_FLOAT = 3), and Microsoft, "Multiple channel audio data
   and WAVE files", 2007 (WAVE_FORMAT_EXTENSIBLE = 0xFFFE).
"""

from __future__ import annotations

import errno
import os
import struct
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator

import numpy as np
from planner.lazyimport import scipy_module

from planner.errors import ExportError

__all__ = ["WavInfo", "open_wav", "read_wav", "check_finite", "write_wav", "WavWriter",
           "READ_BLOCK_FRAMES"]

#: Frames read at a time by :meth:`WavInfo.blocks` and :func:`check_finite`.
READ_BLOCK_FRAMES = 1 << 16

_PCM, _FLOAT, _EXTENSIBLE = 1, 3, 0xFFFE


@dataclass(frozen=True)
class WavInfo:
    """What a WAV file's header says, checked against the file.

    Attributes
    ----------
    path : str
    fs_hz : float
        Sample rate, Hz.
    channels : int
    frames : int
        Whole frames present in the file (the lower of what the header says
        and what the file holds).
    kind : str
        ``'pcm'`` (integer) or ``'float'``.
    bits : int
        Bits per sample (8, 16, 24, 32 or 64).
    data_offset : int
        Byte offset of the first frame in the file.
    notes : tuple of str
        Where the header and the data disagree, in plain words (empty when
        they agree).
    """

    path: str
    fs_hz: float
    channels: int
    frames: int
    kind: str
    bits: int
    data_offset: int
    notes: tuple = ()

    @property
    def frame_bytes(self) -> int:
        return self.channels * self.bits // 8

    def read(self, start: int = 0, count: int | None = None) -> np.ndarray:
        """Frames ``start`` to ``start + count`` as float64, ``(n,)`` mono or ``(n, channels)``."""
        start = max(0, int(start))
        end = self.frames if count is None else min(self.frames, start + int(count))
        n = max(0, end - start)
        with open(self.path, "rb") as fh:
            fh.seek(self.data_offset + start * self.frame_bytes)
            raw = fh.read(n * self.frame_bytes)
        return self._decode(raw, n)

    def blocks(self, frames: int = READ_BLOCK_FRAMES) -> Iterator[np.ndarray]:
        """The file's frames in blocks of ``frames`` (the last one shorter), float64."""
        step = max(1, int(frames))
        with open(self.path, "rb") as fh:
            fh.seek(self.data_offset)
            for start in range(0, self.frames, step):
                n = min(step, self.frames - start)
                yield self._decode(fh.read(n * self.frame_bytes), n)

    def _decode(self, raw: bytes, n: int) -> np.ndarray:
        ch, bits = self.channels, self.bits
        if self.kind == "float":
            x = np.frombuffer(raw, dtype="<f4" if bits == 32 else "<f8").astype(np.float64)
        elif bits == 8:
            x = (np.frombuffer(raw, dtype=np.uint8).astype(np.float64) - 128.0) / 128.0
        elif bits == 24:
            b = np.frombuffer(raw, dtype=np.uint8).reshape(-1, 3).astype(np.int32)
            v = b[:, 0] | (b[:, 1] << 8) | (b[:, 2] << 16)
            v = np.where(v >= 1 << 23, v - (1 << 24), v)
            x = v.astype(np.float64) / float(1 << 23)
        else:
            dt = "<i2" if bits == 16 else "<i4"
            x = np.frombuffer(raw, dtype=dt).astype(np.float64) / float(1 << (bits - 1))
        x = x[:n * ch]
        return x if ch == 1 else x.reshape(n, ch)


def _refuse(path, why: str) -> ExportError:
    return ExportError(f"cannot read {str(path)!r} as WAV: {why}", field="wav")


def open_wav(path) -> WavInfo:
    """Parse a WAV file's header and find its data (nothing of the data is read).

    Raises
    ------
    ExportError
        ``field='wav'``: a missing or unreadable file, not a RIFF WAVE file,
        a cut or unknown ``fmt `` chunk, no ``data`` chunk, or no samples.
    """
    p = str(path)
    try:
        size = os.path.getsize(p)
        fh = open(p, "rb")
    except FileNotFoundError:
        raise ExportError(f"no such file: {p!r}", field="wav") from None
    except IsADirectoryError:
        raise ExportError(f"{p!r} is a folder, not a WAV file", field="wav") from None
    except OSError as e:
        raise ExportError(f"cannot read {p!r}: {e.strerror or e}", field="wav") from None
    with fh:
        head = fh.read(12)
        if len(head) < 12 or head[:4] != b"RIFF" or head[8:12] != b"WAVE":
            why = ("an empty file" if size == 0 else
                   "big-endian RIFX is not supported" if head[:4] == b"RIFX" else
                   "RF64 is not supported" if head[:4] == b"RF64" else
                   "no RIFF WAVE header")
            raise _refuse(p, why)
        fmt = None
        data = None
        notes = []
        pos = 12
        while pos + 8 <= size:
            fh.seek(pos)
            cid, csize = struct.unpack("<4sI", fh.read(8))
            body = pos + 8
            if cid == b"fmt ":
                if csize < 16 or body + 16 > size:
                    raise _refuse(p, f"the fmt chunk is cut short ({min(csize, size - body)} "
                                     "bytes, at least 16 expected)")
                fmt = fh.read(min(csize, 40))
            elif cid == b"data":
                data = (body, csize)
                break
            pos = body + csize + (csize & 1)
        if fmt is None:
            raise _refuse(p, "no fmt chunk before the data" if data else "no fmt chunk")
        if data is None:
            raise _refuse(p, "no data chunk")
    tag, channels, fs, _, align, bits = struct.unpack("<HHIIHH", fmt[:16])
    if tag == _EXTENSIBLE and len(fmt) >= 26:
        tag = struct.unpack("<H", fmt[24:26])[0]
    if tag == _PCM and bits in (8, 16, 24, 32):
        kind = "pcm"
    elif tag == _FLOAT and bits in (32, 64):
        kind = "float"
    else:
        raise _refuse(p, f"format tag {tag} with {bits}-bit samples is not supported "
                         "(PCM 8/16/24/32-bit or IEEE float 32/64-bit)")
    if channels < 1:
        raise _refuse(p, "the header says 0 channels")
    if fs < 1:
        raise _refuse(p, "the header says a sample rate of 0 Hz")
    frame = channels * bits // 8
    if align != frame:
        notes.append(f"{p}: the header's block align is {align} bytes, but {channels} "
                     f"channel(s) of {bits}-bit samples take {frame}; read as {frame}")
    offset, declared = data
    present = max(0, size - offset)
    nbytes = declared
    if declared > present:
        nbytes = present
        notes.append(f"{p}: the data chunk says {declared} bytes but the file holds "
                     f"{present} after its header; read the {present // frame} whole "
                     "frames there")
    if nbytes % frame:
        notes.append(f"{p}: the data ends {nbytes % frame} byte(s) into a frame; that part "
                     "frame is left out")
    frames = nbytes // frame
    if frames == 0:
        raise ExportError(f"{p!r} holds no samples", field="wav")
    return WavInfo(p, float(fs), int(channels), int(frames), kind, int(bits), int(offset),
                   tuple(notes))


def check_finite(info: WavInfo, field: str = "wav") -> None:
    """Refuse a file with NaN or infinite samples: their count, the first one's frame and channel.

    Integer PCM is always finite; float data is scanned block by block.

    Raises
    ------
    ExportError
        ``field``: ``'x.wav': 100 samples are not finite (NaN or infinite), the
        first at sample 1000 of channel 0``.
    """
    if info.kind != "float":
        return
    count, first = 0, None
    start = 0
    for blk in info.blocks():
        bad = ~np.isfinite(blk)
        k = int(np.count_nonzero(bad))
        if k and first is None:
            flat = int(np.flatnonzero(bad.reshape(-1))[0])
            first = (start + flat // info.channels, flat % info.channels)
        count += k
        start += blk.shape[0]
    if count:
        raise ExportError(f"{info.path!r}: {count} sample(s) are not finite (NaN or infinite), "
                          f"the first at sample {first[0]} of channel {first[1]}; nothing can "
                          "be made of them", field=field)


def read_wav(path, field: str = "wav") -> tuple[np.ndarray, float]:
    """Read a whole WAV file as float64 samples in [-1, 1] and its rate in Hz.

    Integer PCM is scaled by its full scale (8-bit unsigned offset removed);
    float data is kept as it is. The result has shape ``(n,)`` for mono and
    ``(n, channels)`` otherwise. Header notes (:attr:`WavInfo.notes`) are
    dropped here: use :func:`open_wav` to see them.

    Raises
    ------
    ExportError
        ``field='wav'``: a missing or unreadable file, or no samples;
        ``field``: samples that are not finite (:func:`check_finite`).
    """
    info = open_wav(path)
    x = info.read()
    if info.kind == "float" and not np.all(np.isfinite(x)):
        check_finite(info, field)
    return x, info.fs_hz


def write_wav(path, samples, fs_hz: float) -> None:
    """Write samples as a 32-bit float WAV (mono for 1-D, one column per channel for 2-D).

    The rate is stored as a whole number of Hz, as the format requires.

    Raises
    ------
    ExportError
        ``field='rate'`` for a rate that is not a whole number of Hz.
    """
    if not float(fs_hz).is_integer():
        raise ExportError(f"{fs_hz!r} Hz: a WAV file holds whole-Hz rates only", field="rate")
    scipy_module("io.wavfile").write(str(path), int(fs_hz),
                                      np.asarray(samples, dtype=np.float32))


class WavWriter:
    """A 32-bit float WAV written block by block, atomically.

    The frames go to a temporary file in the target's folder; :meth:`finish`
    fills in the chunk sizes and flushes it to disk, :meth:`commit` renames it
    over ``path`` (an atomic step), :meth:`abort` removes it. So ``path`` is
    either the old file or the whole new one, never a truncated WAV.
    :meth:`close` is :meth:`finish` then :meth:`commit`.

    Parameters
    ----------
    path : str or path
        The file to make.
    fs_hz : float
        Whole-Hz sample rate.
    channels : int
    """

    def __init__(self, path, fs_hz: float, channels: int):
        if not float(fs_hz).is_integer():
            raise ExportError(f"{fs_hz!r} Hz: a WAV file holds whole-Hz rates only",
                              field="rate")
        self.path = Path(path)
        self.channels = int(channels)
        self.frames = 0
        if self.path.is_dir():
            raise IsADirectoryError(errno.EISDIR, os.strerror(errno.EISDIR), str(self.path))
        folder = self.path.parent if str(self.path.parent) else Path(".")
        try:
            fd, self.tmp = tempfile.mkstemp(prefix=f".{self.path.name}.", suffix=".tmp",
                                            dir=folder)
        except OSError as e:
            raise type(e)(e.errno, e.strerror, str(self.path)) from None
        self._fh = os.fdopen(fd, "wb")
        fs = int(fs_hz)
        self._fh.write(b"RIFF\0\0\0\0WAVE")
        self._fh.write(struct.pack("<4sIHHIIHH", b"fmt ", 16, _FLOAT, self.channels, fs,
                                   fs * self.channels * 4, self.channels * 4, 32))
        self._fh.write(b"data\0\0\0\0")

    def write(self, block) -> None:
        """Append frames (``(n,)`` mono or ``(n, channels)``)."""
        a = np.asarray(block, dtype="<f4")
        self._fh.write(a.tobytes())
        self.frames += a.shape[0]

    def finish(self) -> None:
        """Fill in the chunk sizes, flush the temporary file to disk and close it."""
        nbytes = self.frames * self.channels * 4
        if nbytes + 36 > 0xFFFFFFFF:
            raise ExportError(f"{self.frames} frames are more than a WAV file can hold "
                              "(4 GiB)", field="wav")
        self._fh.seek(4)
        self._fh.write(struct.pack("<I", 36 + nbytes))
        self._fh.seek(40)
        self._fh.write(struct.pack("<I", nbytes))
        self._fh.flush()
        os.fsync(self._fh.fileno())
        self._fh.close()

    def commit(self) -> None:
        """Rename the finished temporary file over ``path`` (keeping an old file's mode)."""
        try:
            mode = self.path.stat().st_mode & 0o7777 if self.path.exists() else 0o644
            os.chmod(self.tmp, mode)
            os.replace(self.tmp, self.path)
        except OSError as e:
            raise type(e)(e.errno, e.strerror, str(self.path)) from None

    def abort(self) -> None:
        """Close and remove the temporary file (nothing is left of this write)."""
        try:
            self._fh.close()
        except OSError:
            pass
        try:
            os.unlink(self.tmp)
        except FileNotFoundError:
            pass

    def close(self) -> None:
        """:meth:`finish`, then :meth:`commit`; on failure the temporary file is removed."""
        try:
            self.finish()
            self.commit()
        except BaseException:
            self.abort()
            raise
