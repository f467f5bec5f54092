"""Reference data for the multi-channel analyzer: auto and cross spectra, coherence, and the
frequency responses of known linear systems (scipy.signal). Imported by generate.py, which
registers `gen_multi` as its part "multi"; writes tests/reference/multi/*.csv.

Files (README.md in this folder documents the columns):
  multi/input.csv      x (coloured noise) and y (x through a scipy Butterworth band-pass plus
                       independent noise), float32, the input of every spectrum below
  multi/spectra.csv    scipy.signal.welch / csd / coherence of (x, y) for a few settings
  multi/cases.csv      the settings of each case
  multi/systems.csv    known systems: a scipy.signal.butter band-pass and a ZOH-sampled
                       single-degree-of-freedom system (cont2discrete): b, a coefficients
  multi/responses.csv  their frequency responses (scipy.signal.freqz) on the lines of N = 4096
                       at fs = 1024 Hz, and the first 256 samples of their impulse responses
                       (scipy.signal.lfilter of a unit impulse), to check a test's own filter
"""

import numpy as np
import scipy
import scipy.signal as ss

MULTI_SEED = 20261202
MULTI_FS = 1024.0
MULTI_LEN = 8192
MULTI_NOISE = 0.1  # output noise rms relative to unit-variance white input before colouring
# (window, nperseg, noverlap, detrend, scaling)
MULTI_CASES = [
    ("hann", 256, 128, "constant", "density"),
    ("hann", 256, 128, "constant", "spectrum"),
    ("hann", 512, 384, False, "density"),
    ("flattop", 256, 192, "constant", "density"),
]
SYSTEM_FS = 1024.0
SYSTEM_N = 4096
SDOF = {"m": 1.0, "fn_hz": 200.0, "zeta": 0.05}  # mass kg, natural frequency, damping ratio


def systems():
    """(name, b, a, description) of each known system."""
    b_bp, a_bp = ss.butter(2, [80.0, 300.0], btype="bandpass", fs=SYSTEM_FS)
    wn = 2.0 * np.pi * SDOF["fn_hz"]
    m, zeta = SDOF["m"], SDOF["zeta"]
    k = m * wn * wn
    c = 2.0 * zeta * np.sqrt(k * m)
    # receptance x/F = 1 / (m s^2 + c s + k), sampled with a zero-order hold on the force
    num, den, _ = ss.cont2discrete(([1.0], [m, c, k]), 1.0 / SYSTEM_FS, method="zoh")
    b_sdof = np.atleast_1d(np.squeeze(num))
    a_sdof = np.atleast_1d(np.squeeze(den))
    # scale the receptance (m/N, ~1e-6) to micrometres per newton so the numbers stay O(1)
    b_sdof = b_sdof * 1e6
    return [
        ("butter_bandpass", b_bp, a_bp,
         f"scipy.signal.butter(2, [80, 300], btype='bandpass', fs={SYSTEM_FS!r})"),
        ("sdof_zoh", b_sdof, a_sdof,
         f"receptance 1e6/(m s^2 + c s + k), m = {m!r} kg, fn = {SDOF['fn_hz']!r} Hz, zeta = {zeta!r}, "
         f"c = 2 zeta sqrt(k m): scipy.signal.cont2discrete(method='zoh', dt = 1/{SYSTEM_FS!r}) "
         "(um/N)"),
    ]


def multi_signals():
    rng = np.random.default_rng(MULTI_SEED)
    white = rng.standard_normal(MULTI_LEN)
    noise = rng.standard_normal(MULTI_LEN)
    # colour the input mildly (a one-pole low-pass) so its spectrum is not flat, but keep its
    # dynamic range small (about 10 dB), where float32 spectra resolve 1e-4 easily
    x = ss.lfilter([1.0], [1.0, -0.5], white)
    _, b, a, _ = systems()[0]
    y = ss.lfilter(b, a, x) + MULTI_NOISE * noise
    x32, y32 = x.astype(np.float32), y.astype(np.float32)
    return x32, y32


def gen_multi(out, write_csv, f32, f64):
    x32, y32 = multi_signals()
    for v in np.concatenate([x32, y32]):
        assert np.float32(float(f32(v))) == v
    x, y = x32.astype(np.float64), y32.astype(np.float64)
    src = f"source: numpy {np.__version__}, scipy {scipy.__version__}"
    write_csv(out, "multi/input.csv", [
        src,
        f"rng = numpy.random.default_rng({MULTI_SEED}); white = standard_normal({MULTI_LEN}); noise = standard_normal({MULTI_LEN})",
        "x = scipy.signal.lfilter([1], [1, -0.5], white)",
        f"y = scipy.signal.lfilter(b, a, x) + {MULTI_NOISE!r} * noise, (b, a) = system butter_bandpass of systems.csv",
        "both rounded to float32 (numpy astype), printed with %.9g (reads back exactly)",
        f"fs = {MULTI_FS!r} Hz",
    ], ["n", "x", "y"], [[str(i), f32(a), f32(b)] for i, (a, b) in enumerate(zip(x32, y32))])

    case_rows, rows = [], []
    for cid, (window, nperseg, noverlap, detrend, scaling) in enumerate(MULTI_CASES):
        kw = dict(fs=MULTI_FS, window=window, nperseg=nperseg, noverlap=noverlap, detrend=detrend)
        f, pxx = ss.welch(x, scaling=scaling, **kw)
        _, pyy = ss.welch(y, scaling=scaling, **kw)
        _, pxy = ss.csd(x, y, scaling=scaling, **kw)
        _, coh = ss.coherence(x, y, **kw)
        segments = (len(x) - noverlap) // (nperseg - noverlap)
        det = "constant" if detrend == "constant" else "none"
        case_rows.append([str(cid), window, str(nperseg), str(noverlap), det, scaling, str(segments)])
        for k in range(len(f)):
            rows.append([str(cid), str(k), f64(f[k]), f64(pxx[k]), f64(pyy[k]), f64(pxy[k].real),
                         f64(pxy[k].imag), f64(coh[k])])
    common = [
        src,
        "input: multi/input.csv (float32 samples as float64)",
        "scipy.signal.welch(v, fs, window=W, nperseg, noverlap, detrend=D, scaling=S) for pxx (x) and pyy (y);",
        "scipy.signal.csd(x, y, same arguments) for pxy (= mean conj(X) Y, one-sided, DC and Nyquist not doubled);",
        "scipy.signal.coherence(x, y, fs, window=W, nperseg, noverlap, detrend=D) (always density scaling)",
        "W a get_window name (periodic); detrend 'none' means detrend=False; average='mean'",
    ]
    write_csv(out, "multi/cases.csv", common,
              ["case", "window", "nperseg", "noverlap", "detrend", "scaling", "segments"], case_rows)
    write_csv(out, "multi/spectra.csv", common,
              ["case", "bin", "f_hz", "pxx", "pyy", "pxy_re", "pxy_im", "coherence"], rows)

    sys_rows, resp_rows, imp_rows = [], [], []
    f_lines = np.arange(SYSTEM_N // 2 + 1) * SYSTEM_FS / SYSTEM_N
    impulse = np.zeros(256)
    impulse[0] = 1.0
    for name, b, a, desc in systems():
        for i, v in enumerate(b):
            sys_rows.append([name, "b", str(i), f64(v)])
        for i, v in enumerate(a):
            sys_rows.append([name, "a", str(i), f64(v)])
        _, h = ss.freqz(b, a, worN=f_lines, fs=SYSTEM_FS)
        for k, (fk, hk) in enumerate(zip(f_lines, h)):
            resp_rows.append([name, str(k), f64(fk), f64(hk.real), f64(hk.imag)])
        for n, v in enumerate(ss.lfilter(b, a, impulse)):
            imp_rows.append([name, str(n), f64(v)])
    sys_common = [src] + [f"{name}: {desc}" for name, _, _, desc in systems()]
    write_csv(out, "multi/systems.csv", sys_common + [
        "y[n] = sum b[i] x[n-i] - sum_{i>=1} a[i] y[n-i] (a[0] = 1), as scipy.signal.lfilter",
    ], ["system", "kind", "index", "value"], sys_rows)
    write_csv(out, "multi/responses.csv", sys_common + [
        f"scipy.signal.freqz(b, a, worN=k fs/N, fs={SYSTEM_FS!r}) for k = 0 .. N/2, N = {SYSTEM_N}",
    ], ["system", "bin", "f_hz", "h_re", "h_im"], resp_rows)
    write_csv(out, "multi/impulses.csv", sys_common + [
        "scipy.signal.lfilter(b, a, unit impulse of 256 samples)",
    ], ["system", "n", "h"], imp_rows)
