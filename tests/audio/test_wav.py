"""The WAV reader: every sample format, headers that disagree with the data, non-finite samples.

Sources: scipy.io.wavfile and the stdlib ``wave`` module write the reference files
(independent writers); 24-bit PCM is packed by hand from the RIFF WAVE layout
(Microsoft / IBM, "Multimedia Programming Interface and Data Specifications 1.0",
1991: little-endian two's complement, 3 bytes a sample).
"""

import struct
import wave

import numpy as np
import pytest
from scipy.io import wavfile

from planner.audio import wav
from planner.errors import ExportError

FS = 48000


def _noise(n=1000, ch=1, seed=0):
    x = np.random.default_rng(seed).uniform(-0.9, 0.9, (n, ch))
    return x[:, 0] if ch == 1 else x


@pytest.mark.parametrize("dtype,full_scale", [(np.int16, 32768), (np.int32, 2 ** 31)])
def test_integer_pcm_scaled_by_full_scale(tmp_path, dtype, full_scale):
    ints = (_noise() * full_scale * 0.9).astype(dtype)
    wavfile.write(tmp_path / "i.wav", FS, ints)
    x, fs = wav.read_wav(tmp_path / "i.wav")
    # Exact: the same division scipy's layout implies (full scale 2**(bits-1)).
    assert fs == FS and np.array_equal(x, ints.astype(float) / full_scale)


def test_8bit_unsigned_offset_removed(tmp_path):
    wavfile.write(tmp_path / "u8.wav", FS, np.array([0, 128, 255, 64], dtype=np.uint8))
    x, _ = wav.read_wav(tmp_path / "u8.wav")
    assert x.tolist() == [-1.0, 0.0, 127 / 128, -0.5]


def test_24bit_by_hand_through_stdlib_wave(tmp_path):
    vals = np.array([0, 1, -1, 2 ** 23 - 1, -2 ** 23, 123456, -654321])
    raw = b"".join(struct.pack("<i", int(v))[:3] for v in vals)
    with wave.open(str(tmp_path / "p24.wav"), "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(3)
        w.setframerate(FS)
        w.writeframes(raw)
    x, fs = wav.read_wav(tmp_path / "p24.wav")
    assert fs == FS and np.array_equal(x, vals / 2 ** 23)


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_float_kept_as_it_is(tmp_path, dtype):
    data = _noise(ch=2).astype(dtype)
    wavfile.write(tmp_path / "f.wav", FS, data)
    x, _ = wav.read_wav(tmp_path / "f.wav")
    assert x.shape == (1000, 2) and np.array_equal(x, data.astype(float))


def test_multichannel_16bit_stdlib_wave(tmp_path):
    ints = (_noise(300, 3) * 30000).astype("<i2")
    with wave.open(str(tmp_path / "m.wav"), "wb") as w:
        w.setnchannels(3)
        w.setsampwidth(2)
        w.setframerate(44100)
        w.writeframes(ints.tobytes())
    x, fs = wav.read_wav(tmp_path / "m.wav")
    assert fs == 44100 and np.array_equal(x, ints / 32768.0)


def test_blocks_join_to_the_whole_file(tmp_path):
    data = _noise(10007, 2).astype(np.float32)
    wavfile.write(tmp_path / "b.wav", FS, data)
    info = wav.open_wav(tmp_path / "b.wav")
    assert np.array_equal(np.concatenate(list(info.blocks(1000))), data.astype(float))
    assert np.array_equal(info.read(5000, 7), data[5000:5007].astype(float))


def test_empty_file_refused(tmp_path):
    (tmp_path / "e.wav").write_bytes(b"")
    with pytest.raises(ExportError, match=r"wav: cannot read .*e.wav' as WAV: an empty file"):
        wav.read_wav(tmp_path / "e.wav")


def test_not_a_wav_refused(tmp_path):
    (tmp_path / "t.wav").write_text("hello there, not audio")
    with pytest.raises(ExportError, match=r"wav: cannot read .* as WAV: no RIFF WAVE header"):
        wav.read_wav(tmp_path / "t.wav")


def test_no_samples_refused(tmp_path):
    wavfile.write(tmp_path / "z.wav", FS, np.zeros(0, dtype=np.int16))
    with pytest.raises(ExportError, match=r"wav: .*z.wav' holds no samples"):
        wav.read_wav(tmp_path / "z.wav")


def test_truncated_header_refused_in_one_line(tmp_path):
    wavfile.write(tmp_path / "ok.wav", FS, np.zeros(100, dtype=np.float32))
    (tmp_path / "cut.wav").write_bytes((tmp_path / "ok.wav").read_bytes()[:30])
    with pytest.raises(ExportError, match=r"the fmt chunk is cut short \(10 bytes, at least 16"):
        wav.read_wav(tmp_path / "cut.wav")


def test_folder_refused(tmp_path):
    with pytest.raises(ExportError, match=r"wav: .* is a folder, not a WAV file"):
        wav.open_wav(tmp_path)


def test_unsupported_format_refused(tmp_path):
    wavfile.write(tmp_path / "ok.wav", FS, np.zeros(100, dtype=np.int16))
    b = bytearray((tmp_path / "ok.wav").read_bytes())
    b[20:22] = struct.pack("<H", 2)            # format tag 2 (ADPCM)
    (tmp_path / "adpcm.wav").write_bytes(bytes(b))
    with pytest.raises(ExportError, match=r"format tag 2 with 16-bit samples is not supported"):
        wav.read_wav(tmp_path / "adpcm.wav")


def test_data_chunk_longer_than_the_file_read_as_far_as_it_goes(tmp_path):
    data = _noise(500).astype(np.float32)
    wavfile.write(tmp_path / "ok.wav", FS, data)
    b = bytearray((tmp_path / "ok.wav").read_bytes())
    i = b.find(b"data")
    b[i + 4:i + 8] = struct.pack("<I", 10 ** 8)
    (tmp_path / "long.wav").write_bytes(bytes(b))
    info = wav.open_wav(tmp_path / "long.wav")
    assert info.frames == 500 and np.array_equal(info.read(), data.astype(float))
    assert len(info.notes) == 1
    assert "the data chunk says 100000000 bytes but the file holds 2000" in info.notes[0]


def test_part_frame_at_the_end_left_out_and_said(tmp_path):
    wavfile.write(tmp_path / "ok.wav", FS, np.zeros((10, 2), dtype=np.int16))
    (tmp_path / "part.wav").write_bytes((tmp_path / "ok.wav").read_bytes()[:-1])
    info = wav.open_wav(tmp_path / "part.wav")
    assert info.frames == 9 and "3 byte(s) into a frame" in info.notes[-1]


def test_nan_samples_refused_with_count_index_and_channel(tmp_path):
    x = _noise(FS, 2).astype(np.float32)
    x[1000:1100, 1] = np.nan
    x[2000, 0] = np.inf
    wavfile.write(tmp_path / "nan.wav", FS, x)
    with pytest.raises(ExportError, match=r"input: .*nan.wav': 101 sample\(s\) are not finite "
                                          r"\(NaN or infinite\), the first at sample 1000 of "
                                          r"channel 1"):
        wav.check_finite(wav.open_wav(tmp_path / "nan.wav"), "input")


def test_nan_past_the_first_block_found(tmp_path):
    x = np.zeros(wav.READ_BLOCK_FRAMES * 2 + 5, dtype=np.float32)
    x[-1] = np.nan
    wavfile.write(tmp_path / "late.wav", FS, x)
    with pytest.raises(ExportError, match=rf"1 sample\(s\) .* at sample {len(x) - 1} of "
                                          r"channel 0"):
        wav.read_wav(tmp_path / "late.wav")


def test_writer_streams_a_file_scipy_reads(tmp_path):
    data = _noise(3000, 2)
    w = wav.WavWriter(tmp_path / "w.wav", 44100, 2)
    for k in range(0, 3000, 700):
        w.write(data[k:k + 700])
    w.close()
    fs, back = wavfile.read(tmp_path / "w.wav")
    assert fs == 44100 and back.dtype == np.float32
    np.testing.assert_array_equal(back, data.astype(np.float32))
