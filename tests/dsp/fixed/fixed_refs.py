"""Shared reference designs of the fixed-point tests."""

import numpy as np
from scipy import signal

FS_HI = 192000.0
#: The fragile case: 30 Hz 8th-order Butterworth highpass at 192 kHz.
FRAGILE = signal.butter(8, 30, "highpass", fs=FS_HI, output="sos")
F_HI = np.geomspace(10, 90000, 1500)
