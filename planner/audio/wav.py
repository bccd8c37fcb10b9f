"""WAV files: read as float samples in [-1, 1], written as 32-bit float.

Read and written with :mod:`scipy.io.wavfile`.

References
----------
.. [1] Microsoft / IBM, "Multimedia Programming Interface and Data
   Specifications 1.0", 1991 (RIFF WAVE; WAVE_FORMAT_IEEE_FLOAT = 3).
"""

from __future__ import annotations

import numpy as np
from scipy.io import wavfile

from planner.errors import ExportError

__all__ = ["read_wav", "write_wav"]


def read_wav(path) -> tuple[np.ndarray, float]:
    """Read a WAV file as float64 samples in [-1, 1] and its rate in Hz.

    Integer PCM is scaled by its full scale (8-bit unsigned offset removed);
    float data is kept as it is. The result has shape ``(n,)`` for mono and
    ``(n, channels)`` otherwise.

    Raises
    ------
    ExportError
        ``field='wav'``: a missing or unreadable file, or no samples.
    """
    try:
        fs, data = wavfile.read(str(path))
    except FileNotFoundError:
        raise ExportError(f"no such file: {str(path)!r}", field="wav") from None
    except (OSError, ValueError, EOFError) as e:
        raise ExportError(f"cannot read {str(path)!r} as WAV: {e}", field="wav") from None
    if data.dtype == np.uint8:
        x = (data.astype(np.float64) - 128.0) / 128.0
    elif np.issubdtype(data.dtype, np.integer):
        x = data.astype(np.float64) / float(-np.iinfo(data.dtype).min)
    else:
        x = data.astype(np.float64)
    if x.shape[0] == 0:
        raise ExportError(f"{str(path)!r} holds no samples", field="wav")
    return x, float(fs)


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
    wavfile.write(str(path), int(fs_hz), np.asarray(samples, dtype=np.float32))
