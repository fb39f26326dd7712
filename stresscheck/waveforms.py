"""Piecewise-linear periodic waveforms, vectorised over corners.

A waveform is given on a grid of segments shared by all waveforms of one converter
model: ``dt`` (N, S) segment durations [s] and, per segment, the value at its start
``a`` and end ``b`` (N, S) [A or V]. Steps between segments are allowed (b of one
segment need not equal a of the next). N is the number of corners (or Monte Carlo
samples), S the number of segments in one period.

Averages and rms values are exact for piecewise-linear waveforms:
  mean = (1/T)·Σ dt·(a + b)/2
  rms² = (1/T)·Σ dt·(a² + a·b + b²)/3
(the integral of a straight line and of its square; any calculus text, e.g. the
trapezoid rms relation in Erickson & Maksimović, Fundamentals of Power Electronics,
2nd ed., appendix A — from memory).
"""

from __future__ import annotations

import numpy as np

# Points per segment where waveforms are sampled for peak searches of expressions that
# mix waveforms (e.g. 2·v_bus(t) − R·i(t)); ends included, so segment-end values are exact.
SAMPLES_PER_SEGMENT = 33


class Grid:
    """Segment durations of one period, shared by the waveforms of one model [s]."""

    def __init__(self, dt: np.ndarray):
        self.dt = np.asarray(dt, dtype=float)
        self.period = self.dt.sum(axis=1)

    @property
    def shape(self):
        return self.dt.shape

    def wave(self, a, b=None) -> "PWL":
        """A waveform with segment start values ``a`` and end values ``b`` (default a)."""
        a = np.broadcast_to(np.asarray(a, dtype=float), self.shape)
        b = a if b is None else np.broadcast_to(np.asarray(b, dtype=float), self.shape)
        return PWL(self, a, b)

    def zeros(self) -> "PWL":
        return self.wave(np.zeros(self.shape))

    def fraction(self) -> np.ndarray:
        return self.dt / self.period[:, None]

    def sample_times(self, k: int = SAMPLES_PER_SEGMENT) -> np.ndarray:
        """(N, S, k) times from each segment's start [s]."""
        return self.dt[:, :, None] * np.linspace(0.0, 1.0, k)[None, None, :]


class PWL:
    """A periodic piecewise-linear waveform on a ``Grid``."""

    __array_ufunc__ = None  # numpy arrays defer to PWL's reflected operators

    def __init__(self, grid: Grid, a: np.ndarray, b: np.ndarray):
        self.grid, self.a, self.b = grid, a, b

    # arithmetic -----------------------------------------------------------------------
    def __add__(self, other):
        if isinstance(other, PWL):
            return PWL(self.grid, self.a + other.a, self.b + other.b)
        other = np.asarray(other, dtype=float)
        other = other[:, None] if other.ndim == 1 else other
        return PWL(self.grid, self.a + other, self.b + other)

    __radd__ = __add__

    def __neg__(self):
        return PWL(self.grid, -self.a, -self.b)

    def __sub__(self, other):
        return self + (-other)

    def __rsub__(self, other):
        return (-self) + other

    def __mul__(self, k):
        k = np.asarray(k, dtype=float)
        k = k[:, None] if k.ndim == 1 else k
        return PWL(self.grid, self.a * k, self.b * k)

    __rmul__ = __mul__

    def __truediv__(self, k):
        return self * (1.0 / np.asarray(k, dtype=float))

    def only(self, mask) -> "PWL":
        """This waveform in the segments where ``mask`` (S,) or (N, S) is true, zero elsewhere."""
        m = np.broadcast_to(np.asarray(mask, dtype=bool), self.a.shape)
        return PWL(self.grid, np.where(m, self.a, 0.0), np.where(m, self.b, 0.0))

    # measures -------------------------------------------------------------------------
    def mean(self) -> np.ndarray:
        """Mean over the period (N,)."""
        return (self.grid.dt * (self.a + self.b) / 2).sum(axis=1) / self.grid.period

    def rms(self) -> np.ndarray:
        """Rms over the period (N,)."""
        sq = (self.grid.dt * (self.a ** 2 + self.a * self.b + self.b ** 2) / 3).sum(axis=1)
        return np.sqrt(np.maximum(sq / self.grid.period, 0.0))

    def ac_rms(self) -> np.ndarray:
        """Rms of the waveform with its mean removed (N,)."""
        return np.sqrt(np.maximum(self.rms() ** 2 - self.mean() ** 2, 0.0))

    def peak(self) -> np.ndarray:
        """Largest magnitude (N,)."""
        return np.maximum(np.abs(self.a), np.abs(self.b)).max(axis=1)

    def max(self) -> np.ndarray:
        return np.maximum(self.a, self.b).max(axis=1)

    def min(self, mask=None) -> np.ndarray:
        """Smallest value (N,); with ``mask`` (S,) or (N, S), over the segments where it
        holds only (+inf at a corner where none does)."""
        low = np.minimum(self.a, self.b)
        if mask is not None:
            low = np.where(mask, low, np.inf)
        return low.min(axis=1)

    def mean_over(self, mask) -> np.ndarray:
        """Time average over the segments where ``mask`` is true (N,)."""
        m = np.broadcast_to(np.asarray(mask, dtype=bool), self.a.shape)
        dt = np.where(m, self.grid.dt, 0.0)
        return (dt * (self.a + self.b) / 2).sum(axis=1) / dt.sum(axis=1)

    def samples(self, k: int = SAMPLES_PER_SEGMENT) -> np.ndarray:
        """(N, S, k) values at ``Grid.sample_times``."""
        s = np.linspace(0.0, 1.0, k)[None, None, :]
        return self.a[:, :, None] + (self.b - self.a)[:, :, None] * s

    def integral_samples(self, k: int = SAMPLES_PER_SEGMENT) -> np.ndarray:
        """(N, S, k) running integral from the start of the period, with its period mean
        removed [unit·s]. The waveform should have zero mean (a capacitor current)."""
        dt, a, b = self.grid.dt, self.a, self.b
        seg = dt * (a + b) / 2
        start = np.concatenate([np.zeros((dt.shape[0], 1)), np.cumsum(seg, axis=1)[:, :-1]],
                               axis=1)
        t = self.grid.sample_times(k)
        slope = np.divide(b - a, dt, out=np.zeros_like(a), where=dt > 0)
        q = start[:, :, None] + a[:, :, None] * t + slope[:, :, None] * t ** 2 / 2
        # exact mean of the piecewise-quadratic running integral
        seg_mean = start * dt + a * dt ** 2 / 2 + slope * dt ** 3 / 6
        mean = seg_mean.sum(axis=1) / self.grid.period
        return q - mean[:, None, None]


class PWQ:
    """A periodic piecewise-quadratic waveform on a ``Grid``: in each segment
    v(τ) = p0 + p1·τ + p2·τ² for 0 ≤ τ ≤ dt, with ``end`` its value at τ = dt (kept
    apart so that a zero-length segment can still step, like a ``PWL``). Capacitor
    voltages (the running integral of a piecewise-linear current) and their sums with
    piecewise-linear waveforms are of this form; their extremes and means are exact.
    """

    __array_ufunc__ = None

    def __init__(self, grid: Grid, p0, p1, p2, end):
        self.grid, self.p0, self.p1, self.p2, self.end = grid, p0, p1, p2, end

    @classmethod
    def lift(cls, w) -> "PWQ":
        """A ``PWL`` (or a PWQ, returned as is) as a PWQ."""
        if isinstance(w, PWQ):
            return w
        dt = w.grid.dt
        slope = np.divide(w.b - w.a, dt, out=np.zeros(np.shape(w.a)), where=dt > 0)
        return cls(w.grid, np.asarray(w.a, float), slope, np.zeros_like(slope),
                   np.asarray(w.b, float))

    def __add__(self, other):
        if isinstance(other, (PWL, PWQ)):
            o = PWQ.lift(other)
            return PWQ(self.grid, self.p0 + o.p0, self.p1 + o.p1, self.p2 + o.p2,
                       self.end + o.end)
        k = _column(other)
        return PWQ(self.grid, self.p0 + k, self.p1, self.p2, self.end + k)

    __radd__ = __add__

    def __neg__(self):
        return PWQ(self.grid, -self.p0, -self.p1, -self.p2, -self.end)

    def __sub__(self, other):
        return self + (-other)

    def __rsub__(self, other):
        return (-self) + other

    def __mul__(self, k):
        k = _column(k)
        return PWQ(self.grid, self.p0 * k, self.p1 * k, self.p2 * k, self.end * k)

    __rmul__ = __mul__

    def segment_means(self) -> np.ndarray:
        """(N, S) exact time average in each segment (the start value where dt = 0)."""
        dt = self.grid.dt
        return self.p0 + self.p1 * dt / 2 + self.p2 * dt ** 2 / 3

    def mean_over(self, mask) -> np.ndarray:
        """(N,) exact time average over the segments where ``mask`` is true."""
        m = np.broadcast_to(np.asarray(mask, dtype=bool), self.p0.shape)
        dt = np.where(m, self.grid.dt, 0.0)
        return (dt * self.segment_means()).sum(axis=1) / dt.sum(axis=1)

    def segment_max(self) -> np.ndarray:
        """(N, S) exact maximum in each segment: its ends and, where the parabola
        opens downwards, its vertex τ* = −p1/(2·p2) inside the segment."""
        dt = self.grid.dt
        with np.errstate(divide="ignore", invalid="ignore"):
            tau = -self.p1 / (2 * self.p2)
        inside = (self.p2 < 0) & (tau > 0) & (tau < dt)
        tau = np.where(inside, tau, 0.0)
        vertex = np.where(inside, self.p0 + self.p1 * tau + self.p2 * tau ** 2, -np.inf)
        return np.maximum(np.maximum(self.p0, self.end), vertex)

    def max(self, mask=None) -> np.ndarray:
        """(N,) exact maximum over the segments where ``mask`` (S,) or (N, S) holds
        (all by default); −inf where no segment does."""
        seg = self.segment_max()
        if mask is not None:
            m = np.broadcast_to(np.asarray(mask, dtype=bool), seg.shape)
            seg = np.where(m, seg, -np.inf)
        return seg.max(axis=1)

    def samples(self, k: int = SAMPLES_PER_SEGMENT) -> np.ndarray:
        """(N, S, k) values at ``Grid.sample_times`` (the last one is ``end``)."""
        t = self.grid.sample_times(k)
        out = self.p0[:, :, None] + (self.p1[:, :, None] + self.p2[:, :, None] * t) * t
        out[:, :, -1] = self.end
        return out


def select(states: np.ndarray, choices: list) -> PWQ:
    """Per segment the waveform ``choices[states]`` (states (N, S) ints), as a PWQ."""
    qs = [PWQ.lift(c) for c in choices]
    idx = np.asarray(states)

    def pick(name):
        stack = np.stack([np.broadcast_to(getattr(q, name), idx.shape) for q in qs])
        return np.take_along_axis(stack, idx[None], axis=0)[0]

    return PWQ(qs[0].grid, pick("p0"), pick("p1"), pick("p2"), pick("end"))


def _column(k):
    """A scalar, (N,) or (N, S) factor, shaped to broadcast against (N, S)."""
    k = np.asarray(k, dtype=float)
    return k[:, None] if k.ndim == 1 else k


def capacitor_voltage(i_c: PWL, capacitance, esr, v_mean) -> PWQ:
    """Terminal voltage of a capacitor with ESR carrying the periodic current ``i_c``,
    exactly, as a piecewise quadratic [V].

    v(t) = V_mean + (1/C)·(∫i_c dt − its period mean) + ESR·i_c(t); with i_c = a + s·τ
    in a segment starting at charge q_0: p0 = V_mean + (q_0 − q̄)/C + ESR·a,
    p1 = a/C + ESR·s, p2 = s/(2C) (the integral of a straight line).

    Parameters
    ----------
    i_c : PWL
        Capacitor current [A]; zero mean (charge balance in steady state).
    capacitance, esr, v_mean : (N,) or scalar
        [F], [ohm], mean terminal voltage [V].
    """
    dt, a, b = i_c.grid.dt, i_c.a, i_c.b
    slope = np.divide(b - a, dt, out=np.zeros_like(a), where=dt > 0)
    seg = dt * (a + b) / 2
    start = np.concatenate([np.zeros((dt.shape[0], 1)), np.cumsum(seg, axis=1)[:, :-1]],
                           axis=1)
    seg_mean = start * dt + a * dt ** 2 / 2 + slope * dt ** 3 / 6
    q0 = start - (seg_mean.sum(axis=1) / i_c.grid.period)[:, None]
    c, r, v = _column(capacitance), _column(esr), _column(v_mean)
    p0 = v + q0 / c + r * a
    p1 = a / c + r * slope
    p2 = slope / (2 * c)
    end = v + (q0 + seg) / c + r * b
    return PWQ(i_c.grid, p0 + 0 * p1, p1 + 0 * p0, p2 + 0 * p0, end + 0 * p0)


def capacitor_voltage_samples(i_c: PWL, capacitance, esr, v_mean,
                              k: int = SAMPLES_PER_SEGMENT) -> np.ndarray:
    """Terminal voltage of a capacitor with ESR carrying the periodic current ``i_c``.

    v(t) = V_mean + (1/C)·∫(i_c − 0) dt (mean removed) + ESR·i_c(t)   [V], (N, S, k).
    The current must have zero mean (charge balance in steady state).
    """
    return per_corner(v_mean) + i_c.integral_samples(k) / per_corner(capacitance) \
        + per_corner(esr) * i_c.samples(k)


def per_corner(x, ndim: int = 3) -> np.ndarray:
    """A per-corner value shaped to broadcast against an array of ``ndim`` axes whose
    first axis is the corner: (N,) -> (N, 1, …, 1); a scalar stays a scalar.

    Parameters
    ----------
    x : float or numpy.ndarray
        Scalar or (N,) value [any unit].
    ndim : int
        Number of axes of the array it meets: 3 for samples (N, S, k), 2 for
        per-segment values (N, S).

    Returns
    -------
    numpy.ndarray
        ``x`` as float, (N, 1, …) or 0-d [unit of ``x``].
    """
    x = np.asarray(x, dtype=float)
    return x.reshape(x.shape + (1,) * (ndim - 1)) if x.ndim == 1 else x


def max_over(values: np.ndarray, mask=None) -> np.ndarray:
    """Maximum of sampled values (N, S, k) over the segments where ``mask`` holds.

    Parameters
    ----------
    values : numpy.ndarray
        Sampled values (N, S, k) [any unit].
    mask : numpy.ndarray, optional
        Segments to search: (S,) shared by all corners, or (N, S) per corner. None: all.

    Returns
    -------
    numpy.ndarray
        Maximum per corner (N,) [unit of ``values``]; −inf at a corner where a per-corner
        mask holds in no segment.
    """
    if mask is not None:
        m = np.asarray(mask, dtype=bool)
        if m.ndim == 2:
            return np.where(m[:, :, None], values, -np.inf).max(axis=(1, 2))
        values = values[:, m, :]
    return values.max(axis=(1, 2))


def mean_over_samples(values: np.ndarray, grid: Grid, mask, fallback=None) -> np.ndarray:
    """Time average of sampled values (N, S, k) over the segments in ``mask`` (trapezoid).

    Parameters
    ----------
    values : numpy.ndarray
        Sampled values (N, S, k) [any unit].
    grid : Grid
        The segment durations [s].
    mask : numpy.ndarray
        Segments to average over: (S,) shared by all corners, or (N, S) per corner.
    fallback : numpy.ndarray, optional
        With a per-corner mask: the value (N,) where the masked segments have no
        duration [unit of ``values``].

    Returns
    -------
    numpy.ndarray
        Time average per corner (N,) [unit of ``values``].
    """
    m = np.asarray(mask, dtype=bool)
    if m.ndim == 2:
        seg_avg = (values[:, :, 1:] + values[:, :, :-1]).mean(axis=2) / 2
        dt = np.where(m, grid.dt, 0.0)
        total = dt.sum(axis=1)
        mean = (seg_avg * dt).sum(axis=1) / np.where(total > 0, total, 1.0)
        return np.where(total > 0, mean, fallback)
    v = values[:, m, :]
    dt = grid.dt[:, m]
    seg_avg = (v[:, :, 1:] + v[:, :, :-1]).mean(axis=2) / 2
    return (seg_avg * dt).sum(axis=1) / dt.sum(axis=1)
