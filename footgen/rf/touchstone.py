"""Measured S11 from Touchstone v1 files (read and written through scikit-rf) and its analysis.

Reading accepts ``.s1p`` and ``.s2p`` (S11 of the two-port), every frequency unit (Hz, kHz, MHz,
GHz) and data format (RI, MA, DB) of the Touchstone v1 option line, and any positive real
reference resistance: the data are renormalised to 50 ohm (all ports) before S11 is taken.
Every problem with a file raises :class:`MeasurementError` with one line: the file, what is
wrong, and the fix.  The analysis functions are pure functions of arrays.  Nothing prints.
"""

from __future__ import annotations

import io
import math
import os
import tempfile
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from footgen.errors import MeasurementError, SpecError

Z0_OHM = 50.0
MIN_POINTS = 2
RESONANCE_THRESHOLD_DB = -6.0  # a dip counts as a resonance below this |S11| (project choice)
MATCH_LEVEL_DB = -10.0  # band edge level (common practice, no source)
POWER_FLOOR = 1e-30  # |S11|^2 floor for the dB of an exact zero (-300 dB)
NOISE_COLUMNS = 5  # a two-port noise line: freq, NFmin, |Gamma_opt|, angle, Rn/R (Touchstone v1)

FREQ_UNIT_HZ: dict[str, float] = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}
# Spelling of each unit as scikit-rf writes it on the option line.
_SKRF_UNIT = {"hz": "Hz", "khz": "kHz", "mhz": "MHz", "ghz": "GHz"}
DATA_FORMATS = ("ri", "ma", "db")
PORTS_BY_SUFFIX = {".s1p": 1, ".s2p": 2}
OPTION_LINE_HELP = "'# <Hz|kHz|MHz|GHz> S <RI|MA|DB> R <ohm>'"


@dataclass(frozen=True)
class Measurement:
    """S11 of one file, referred to ``z0_ohm`` (always 50 ohm after renormalisation).

    ``file_z0_ohm`` is the reference resistance the file was written with (port 1).
    """

    freq_hz: np.ndarray
    s11: np.ndarray
    z0_ohm: float
    source: str
    file_z0_ohm: float = Z0_OHM


@dataclass(frozen=True)
class S11Summary:
    """Key numbers of a measured S11 around a design frequency ``f0_hz``."""

    source: str
    f0_hz: float
    s11_db_at_f0: float
    zin_at_f0_ohm: complex
    vswr_at_f0: float
    min_s11_db: float
    f_min_s11_hz: float
    resonances_hz: tuple[float, ...]
    bands_below_10db_hz: tuple[tuple[float, float], ...]
    bandwidth_10db_at_f0_hz: float  # width of the -10 dB band holding f0; 0 if f0 is in none


# ----------------------------------------------------------------------------- reading


def _fail(path: object, what: str, fix: str) -> MeasurementError:
    line = f"{path}: {what}; {fix}"
    return MeasurementError(" ".join(line.split()))


#: Largest measurement file read (bytes): a 100,001-point two-port sweep takes about 20 MB.
MAX_TOUCHSTONE_BYTES = 32 * 2**20


def _read_text(path: Path) -> str:
    """File text as scikit-rf reads it (UTF-8 with BOM, else Latin-1), at most
    :data:`MAX_TOUCHSTONE_BYTES` (a larger file is refused without reading it whole)."""
    too_large = _fail(
        path, f"is larger than {MAX_TOUCHSTONE_BYTES // 2**20} MiB", "export the measured sweep alone (a VNA sweep is a few MB at most)"
    )
    try:
        if path.is_file() and path.stat().st_size > MAX_TOUCHSTONE_BYTES:
            raise too_large
        with open(path, "rb") as handle:
            raw = handle.read(MAX_TOUCHSTONE_BYTES + 1)
        if len(raw) > MAX_TOUCHSTONE_BYTES:
            raise too_large
    except FileNotFoundError:
        raise _fail(path, "file not found", "check the path of the measurement file") from None
    except OSError as err:
        reason = f"cannot be read ({err.strerror})"
        raise _fail(path, reason, "check the path and permissions") from None
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return raw.decode("latin-1")


def _check_option_line(path: Path, text: str) -> float:
    """Validate the Touchstone v1 option line; return its reference resistance (ohm)."""
    for line in text.splitlines():
        stripped = line.strip()
        if not stripped or stripped.startswith("!"):
            continue
        if stripped.startswith("["):
            raise _fail(path, "is a Touchstone v2 file", "export Touchstone v1 (.s1p or .s2p)")
        if not stripped.startswith("#"):
            raise _fail(path, "data before the option line", f"start with {OPTION_LINE_HELP}")
        tokens = stripped[1:].partition("!")[0].lower().split()
        # Omitted trailing fields take the Touchstone v1 defaults GHz S MA R 50.
        tokens += ["ghz", "s", "ma", "r", "50"][len(tokens):]
        unit, parameter, data_format, r_word, *resistances = tokens
        fix = f"write {OPTION_LINE_HELP}"
        if unit not in FREQ_UNIT_HZ:
            raise _fail(path, f"option line has frequency unit {unit!r}", fix)
        if parameter != "s":
            raise _fail(
                path, f"holds {parameter.upper()}-parameters", "export S-parameters (option 'S')"
            )
        if data_format not in DATA_FORMATS:
            raise _fail(path, f"option line has data format {data_format!r}", fix)
        if r_word != "r":
            raise _fail(path, f"option line has {r_word!r} where 'R' belongs", fix)
        values = []
        for token in resistances or ["50"]:
            try:
                values.append(float(token))
            except ValueError:
                what = f"reference resistance {token!r} is not a real number"
                raise _fail(path, what, fix) from None
        if not all(math.isfinite(v) and v > 0 for v in values):
            raise _fail(path, f"reference resistance {values} is not positive", fix)
        return values[0]
    raise _fail(path, "has no option line and no data", f"export a sweep after {OPTION_LINE_HELP}")


def _check_data_lines(path: Path, text: str, ports: int) -> None:
    """Touchstone v1 puts all data of one frequency of a one- or two-port on one line
    (1 + 2 N^2 numbers); a two-port file may end in a noise block of 5-number lines, which
    starts where the frequency falls below the last network frequency (as scikit-rf reads it)."""
    per_point = 1 + 2 * ports * ports
    last_freq = -math.inf  # no noise line before the first network line
    in_noise = False
    for number, line in enumerate(text.splitlines(), start=1):
        data = line.partition("!")[0].strip()
        if not data or data.startswith("#"):
            continue
        tokens = data.split()
        if len(tokens) == per_point and not in_noise:
            last_freq = _leading_number(tokens)
            continue
        noise_line = len(tokens) == NOISE_COLUMNS and ports == 2
        if noise_line and (in_noise or _leading_number(tokens) < last_freq):
            in_noise = True
            continue
        raise _fail(
            path,
            f"line {number} holds {len(tokens)} value(s) (truncated, or not {ports}-port data)",
            f"a .s{ports}p data line holds the frequency and {per_point - 1} numbers",
        )


def _leading_number(tokens: list[str]) -> float:
    """The first token as a number, NaN if it is none (scikit-rf reports it later)."""
    try:
        return float(tokens[0])
    except ValueError:
        return math.nan


def _parse_with_skrf(path: Path, text: str, ports: int):
    """Touchstone parse by scikit-rf; every exception or warning becomes MeasurementError."""
    from skrf.io.touchstone import Touchstone

    numbers = 1 + 2 * ports * ports
    stream = io.StringIO(text)
    stream.name = str(path)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            return Touchstone(stream)
    except Exception as err:  # scikit-rf raises ValueError, IndexError, ... on bad data
        reason = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        raise _fail(
            path,
            f"unreadable data ({reason})",
            f"each data line must hold the frequency and {numbers - 1} numbers ({numbers} in all)",
        ) from None


def _network_s11(path: Path, touchstone, ports: int) -> tuple[np.ndarray, np.ndarray]:
    """Frequencies and S11 referred to 50 ohm, renormalised by scikit-rf."""
    import skrf

    freq_hz = np.asarray(touchstone.f, dtype=float)
    s = np.asarray(touchstone.s, dtype=complex)
    if touchstone.noise is not None and np.ndim(touchstone.noise) == 2:
        if np.shape(touchstone.noise)[1] != NOISE_COLUMNS:
            raise _fail(path, "frequencies are not increasing", "sort the sweep by frequency")
    if freq_hz.size == 0:
        raise _fail(path, "has no data lines", "export the measured sweep into the file")
    if freq_hz.size < MIN_POINTS:
        fix = f"measure a sweep of at least {MIN_POINTS} points"
        raise _fail(path, "holds a single frequency point", fix)
    if s.shape != (freq_hz.size, ports, ports):
        raise _fail(path, f"data do not form {ports}-port matrices", f"export a .s{ports}p file")
    _check_sweep_arrays(path, freq_hz, s[:, 0, 0])
    if not np.all(np.isfinite(s)):
        raise _fail(path, "holds non-finite S-parameters", "re-export the measurement")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            network = skrf.Network(
                frequency=skrf.Frequency.from_f(freq_hz, unit="hz"), s=s, z0=touchstone.z0
            )
            network.renormalize(Z0_OHM)
            s11 = np.array(network.s[:, 0, 0], dtype=complex)
    except Exception as err:
        reason = f"cannot be renormalised to 50 ohm ({err})"
        raise _fail(path, reason, "check the reference resistance") from None
    return freq_hz, s11


def read_s11(path: str | os.PathLike) -> Measurement:
    """Read S11 from a Touchstone v1 ``.s1p`` or ``.s2p`` file, renormalised to 50 ohm."""
    file_path = Path(path)
    ports = PORTS_BY_SUFFIX.get(file_path.suffix.lower())
    if ports is None:
        raise _fail(
            file_path,
            f"extension {file_path.suffix or '(none)'!r} is not .s1p or .s2p",
            "export a Touchstone v1 one-port (.s1p) or two-port (.s2p) file",
        )
    text = _read_text(file_path)
    file_z0_ohm = _check_option_line(file_path, text)
    _check_data_lines(file_path, text, ports)
    touchstone = _parse_with_skrf(file_path, text, ports)
    freq_hz, s11 = _network_s11(file_path, touchstone, ports)
    freq_hz.setflags(write=False)
    s11.setflags(write=False)
    return Measurement(freq_hz, s11, Z0_OHM, str(file_path), file_z0_ohm)


# ----------------------------------------------------------------------------- writing


def write_s1p(
    path: str | os.PathLike,
    freq_hz: np.ndarray,
    s11: np.ndarray,
    comment: str = "",
    *,
    data_format: str = "ri",
    freq_unit: str = "GHz",
) -> Path:
    """Write S11 (referred to 50 ohm) as a Touchstone v1 ``.s1p`` through scikit-rf.

    Written atomically: to a temporary file beside ``path``, then renamed over it.
    ``comment`` lines become ``!`` lines; ``data_format`` is RI, MA or DB, ``freq_unit`` one of
    Hz, kHz, MHz, GHz.  Returns the path written.
    """
    import skrf

    file_path = Path(path)
    if file_path.suffix.lower() != ".s1p":
        raise SpecError("path", str(path), "a one-port Touchstone file must end in .s1p")
    unit_key = freq_unit.lower()
    if unit_key not in FREQ_UNIT_HZ:
        raise SpecError("freq_unit", freq_unit, "use Hz, kHz, MHz or GHz")
    form = data_format.lower()
    if form not in DATA_FORMATS:
        raise SpecError("data_format", data_format, "use RI, MA or DB")
    f = np.asarray(freq_hz, dtype=float)
    s = np.asarray(s11, dtype=complex)
    _check_sweep_arrays(file_path, f, s)
    if not np.all(np.isfinite(s)):
        raise SpecError("s11", "array", "S11 must be finite to be written")
    if form == "db" and np.any(s == 0):
        raise SpecError("s11", "array", "an exact zero has no dB value; write it as RI or MA")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        network = skrf.Network(
            frequency=skrf.Frequency.from_f(f, unit="hz"), s=s.reshape(-1, 1, 1), z0=Z0_OHM
        )
        network.frequency.unit = _SKRF_UNIT[unit_key]
        network.comments = "\n".join(" " + line for line in comment.splitlines())
        text = network.write_touchstone(
            filename=file_path.name, return_string=True, form=form, skrf_comment=False
        )
    directory = file_path.parent if str(file_path.parent) else Path(".")
    handle, temp_name = tempfile.mkstemp(dir=directory, prefix=f".{file_path.name}.", suffix=".tmp")
    try:
        with os.fdopen(handle, "w", encoding="ascii", errors="replace", newline="\n") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())
        os.replace(temp_name, file_path)
    except BaseException:
        if os.path.exists(temp_name):
            os.unlink(temp_name)
        raise
    return file_path


# ----------------------------------------------------------------------------- analysis


def _check_sweep_arrays(source: object, freq_hz: np.ndarray, s11: np.ndarray) -> None:
    if freq_hz.ndim != 1 or s11.shape != freq_hz.shape:
        raise _fail(source, "frequency and S11 arrays differ in shape", "give one S11 a frequency")
    if freq_hz.size < MIN_POINTS:
        fix = f"give a sweep of at least {MIN_POINTS} points"
        raise _fail(source, f"{freq_hz.size} frequency point(s)", fix)
    if not np.all(np.isfinite(freq_hz)) or np.any(freq_hz < 0):
        raise _fail(source, "frequencies are not finite and non-negative", "re-export the sweep")
    steps = np.diff(freq_hz)
    if np.any(steps <= 0):
        bad = int(np.argmax(steps <= 0)) + 1
        raise _fail(
            source,
            f"frequencies are not increasing (point {bad + 1}: {freq_hz[bad]:.9g} Hz"
            f" after {freq_hz[bad - 1]:.9g} Hz)",
            "sort the sweep by rising frequency and drop repeated points",
        )


def _arrays(freq_hz, s11) -> tuple[np.ndarray, np.ndarray]:
    f = np.asarray(freq_hz, dtype=float)
    s = np.asarray(s11, dtype=complex)
    _check_sweep_arrays("sweep", f, s)
    return f, s


def s11_db(s11: np.ndarray) -> np.ndarray:
    """|S11| in dB, 10 log10 |S11|^2, with an exact zero reported at the floor (-300 dB)."""
    power = np.abs(np.asarray(s11, dtype=complex)) ** 2
    return 10.0 * np.log10(np.maximum(power, POWER_FLOOR))


def parabola_vertex(x: np.ndarray, y: np.ndarray) -> tuple[float, float] | None:
    """Vertex (x, y) of the parabola through three points, or None if it does not open upward."""
    x0, x1, x2 = (float(v) for v in x)
    y0, y1, y2 = (float(v) for v in y)
    denom = (x0 - x1) * (x0 - x2) * (x1 - x2)
    a = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / denom
    b = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / denom
    if not a > 0:
        return None
    c = y1 - a * x1 * x1 - b * x1
    xv = min(max(-b / (2.0 * a), x0), x2)
    return xv, a * xv * xv + b * xv + c


def _refined_minimum(f: np.ndarray, power: np.ndarray, i: int) -> tuple[float, float]:
    """Minimum of |S11|^2 near interior sample ``i``, refined by a parabola through i-1, i, i+1.

    The parabola is fitted to |S11|^2, which is smooth (quadratic) through a resonance, unlike
    |S11| or its dB value.  Frequencies are centred on sample ``i`` and scaled for conditioning.
    """
    scale = f[i + 1] - f[i - 1]
    vertex = parabola_vertex((f[i - 1 : i + 2] - f[i]) / scale, power[i - 1 : i + 2])
    if vertex is None:
        return float(f[i]), float(power[i])
    xv, yv = vertex
    return float(f[i] + xv * scale), float(min(max(yv, POWER_FLOOR), power[i]))


def resonances_hz(
    freq_hz: np.ndarray, s11: np.ndarray, threshold_db: float = RESONANCE_THRESHOLD_DB
) -> tuple[float, ...]:
    """Frequencies of the local minima of |S11| below ``threshold_db`` (interior samples only),
    each refined between samples by a parabola through the three points around the minimum."""
    f, s = _arrays(freq_hz, s11)
    power = np.abs(s) ** 2
    limit = 10.0 ** (threshold_db / 10.0)
    found = []
    for i in range(1, f.size - 1):
        if power[i] < power[i - 1] and power[i] <= power[i + 1] and power[i] < limit:
            found.append(_refined_minimum(f, power, i)[0])
    return tuple(found)


def min_s11_db(freq_hz: np.ndarray, s11: np.ndarray) -> tuple[float, float]:
    """(frequency in Hz, level in dB) of the smallest |S11|; refined by the parabola when the
    smallest sample is interior, the sample itself at either end of the sweep."""
    f, s = _arrays(freq_hz, s11)
    power = np.abs(s) ** 2
    i = int(np.argmin(power))
    if 0 < i < f.size - 1:
        f_min, p_min = _refined_minimum(f, power, i)
    else:
        f_min, p_min = float(f[i]), float(power[i])
    return f_min, float(10.0 * math.log10(max(p_min, POWER_FLOOR)))


def band_below_db(
    freq_hz: np.ndarray, s11: np.ndarray, level_db: float = MATCH_LEVEL_DB
) -> list[tuple[float, float]]:
    """Frequency ranges (f_lo, f_hi) where |S11| is below ``level_db``; each edge is the linear
    interpolation (in dB against frequency) between the samples on either side of the crossing.
    A band running off the sweep ends at the first or last frequency."""
    f, s = _arrays(freq_hz, s11)
    db = s11_db(s)
    below = db < level_db
    bands = []
    i = 0
    n = f.size
    while i < n:
        if not below[i]:
            i += 1
            continue
        start = i
        while i + 1 < n and below[i + 1]:
            i += 1
        stop = i
        f_lo = f[0] if start == 0 else _crossing(f, db, start - 1, level_db)
        f_hi = f[-1] if stop == n - 1 else _crossing(f, db, stop, level_db)
        bands.append((float(f_lo), float(f_hi)))
        i += 1
    return bands


def _crossing(f: np.ndarray, db: np.ndarray, i: int, level_db: float) -> float:
    """Frequency where the straight line through samples i, i+1 (dB) meets ``level_db``."""
    t = (level_db - db[i]) / (db[i + 1] - db[i])
    return float(f[i] + t * (f[i + 1] - f[i]))


def s11_at(freq_hz: np.ndarray, s11: np.ndarray, f0_hz: float) -> complex:
    """S11 at ``f0_hz`` by linear interpolation of its real and imaginary parts."""
    f, s = _arrays(freq_hz, s11)
    if not (f[0] <= f0_hz <= f[-1]):
        raise _fail(
            "sweep",
            f"f0 {f0_hz:.9g} Hz lies outside the measured {f[0]:.9g} .. {f[-1]:.9g} Hz",
            "measure across f0 or choose f0 inside the sweep",
        )
    return complex(np.interp(f0_hz, f, s.real), np.interp(f0_hz, f, s.imag))


def zin_at(freq_hz: np.ndarray, s11: np.ndarray, f0_hz: float, z0_ohm: float = Z0_OHM) -> complex:
    """Input impedance at ``f0_hz``: Z = Z0 (1 + S11)/(1 - S11) with S11 interpolated linearly
    (Pozar, Microwave Engineering, 4th ed., eq. 2.35 solved for Z_L, from memory)."""
    gamma = s11_at(freq_hz, s11, f0_hz)
    if gamma == 1:
        return complex(math.inf, 0.0)
    return z0_ohm * (1.0 + gamma) / (1.0 - gamma)


def vswr(gamma: complex) -> float:
    """VSWR = (1 + |Gamma|)/(1 - |Gamma|) (Pozar, 4th ed., eq. 2.41, from memory)."""
    mag = abs(gamma)
    return math.inf if mag >= 1.0 else (1.0 + mag) / (1.0 - mag)


def summarise(measurement: Measurement, f0_hz: float) -> S11Summary:
    """Summary of a measurement around ``f0_hz`` (which must lie inside the sweep)."""
    f, s = measurement.freq_hz, measurement.s11
    gamma = s11_at(f, s, f0_hz)
    f_min, level_min = min_s11_db(f, s)
    bands = tuple(band_below_db(f, s, MATCH_LEVEL_DB))
    width = next((hi - lo for lo, hi in bands if lo <= f0_hz <= hi), 0.0)
    return S11Summary(
        source=measurement.source,
        f0_hz=float(f0_hz),
        s11_db_at_f0=float(s11_db(np.array([gamma]))[0]),
        zin_at_f0_ohm=zin_at(f, s, f0_hz, measurement.z0_ohm),
        vswr_at_f0=vswr(gamma),
        min_s11_db=level_min,
        f_min_s11_hz=f_min,
        resonances_hz=resonances_hz(f, s),
        bands_below_10db_hz=bands,
        bandwidth_10db_at_f0_hz=float(width),
    )
