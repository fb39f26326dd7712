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
