"""Reference data for the time-domain overall levels (src/analysis/levels): the analog
prototype of the severity band-pass with integration, and its digital realisation, evaluated
with scipy.signal. Called from generate.py (PARTS["levels"]); writes levels_response.csv.
"""

import numpy as np
import scipy
import scipy.signal as ss

# (sample rate Hz, lower edge Hz, upper edge Hz): the two severity bands at the demo's rate,
# and the 10-1000 Hz band at twice and at a quarter of it.
CONFIGS = [(25600.0, 10.0, 1000.0), (25600.0, 2.0, 1000.0), (51200.0, 10.0, 1000.0), (6400.0, 10.0, 1000.0)]
# Tone frequencies, Hz: 2 to 2000 Hz, each a whole number of periods in 10 s.
FREQUENCIES = [2.0, 3.0, 4.0, 5.0, 8.0, 10.0, 12.0, 16.0, 20.0, 31.5, 50.0, 79.4, 100.0, 160.0,
               250.0, 400.0, 630.0, 800.0, 900.0, 1000.0, 1250.0, 1600.0, 2000.0]


def responses(fs, low, high, f, k):
    """|H| of the analog prototype and of the digital chain at f for k integrations."""
    w = 2 * np.pi * f
    # Analog prototype: third-order Butterworth high-pass at low, low-pass at high, 1/s^k.
    bh, ah = ss.butter(3, 2 * np.pi * low, btype="highpass", analog=True)
    bl, al = ss.butter(3, 2 * np.pi * high, btype="lowpass", analog=True)
    _, hh = ss.freqs(bh, ah, worN=[w])
    _, hl = ss.freqs(bl, al, worN=[w])
    analog = abs(hh[0] * hl[0]) / w**k
    # Digital: the same Butterworth filters by the prewarped bilinear transform (butter with
    # fs=), and the bilinear integrator (1 + z^-1) / (c (1 - z^-1)), c = w_low / tan(pi low / fs).
    if f >= fs / 2:
        return analog, float("nan")
    sh = ss.butter(3, low, btype="highpass", fs=fs, output="sos")
    sl = ss.butter(3, high, btype="lowpass", fs=fs, output="sos")
    _, dh = ss.sosfreqz(sh, worN=[f], fs=fs)
    _, dl = ss.sosfreqz(sl, worN=[f], fs=fs)
    c = 2 * np.pi * low / np.tan(np.pi * low / fs)
    _, di = ss.freqz([1.0 / c, 1.0 / c], [1.0, -1.0], worN=[f], fs=fs)
    digital = abs(dh[0] * dl[0]) * abs(di[0]) ** k
    return analog, digital


def gen_levels(out, write_csv, f64):
    rows = []
    for fs, low, high in CONFIGS:
        for k in (0, 1, 2):
            for f in FREQUENCIES:
                analog, digital = responses(fs, low, high, f, k)
                rows.append([f64(fs), f64(low), f64(high), str(k), f64(f), f64(analog), f64(digital)])
    write_csv(out, "levels_response.csv", [
        f"source: scipy {scipy.__version__} scipy.signal.butter (analog=True, and fs= for the",
        "  prewarped bilinear form), scipy.signal.freqs, sosfreqz, freqz; numpy " + np.__version__,
        "analog = |HP3(j w) LP3(j w)| / w^k: third-order Butterworth high-pass at low_hz and",
        "  low-pass at high_hz, k integrations (0 acceleration, 1 velocity, 2 displacement)",
        "digital = |butter(3, low, 'highpass', fs) butter(3, high, 'lowpass', fs)| times |I(f)|^k,",
        "  I = bilinear integrator (1 + z^-1) / (c (1 - z^-1)), c = 2 pi low / tan(pi low / fs)",
    ], ["fs_hz", "low_hz", "high_hz", "integrations", "frequency_hz", "analog", "digital"], rows)
