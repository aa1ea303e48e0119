"""Victim noise in the weak-coupling model: waveforms and peaks (docs/physics.md §3).

The aggressor edge is a linear ramp of ``swing_v`` whose 10-90 % rise time is
``rise_time_s`` (ramp duration T = rise_time / 0.8). Lines are lossless and the
aggressor is matched. A run is a chain of pieces, each with its own Kb, Kf, length
and velocity, listed from end A to end B; the driver may sit at either end.

Victim terminations (``termination``, the same words as the rules file):

* ``"matched"``: both victim ends matched; the near-end and far-end noise are the
  waves as they arrive.
* ``"high-z-receiver"``: the victim is driven from one end through a matched
  (series-terminated) source and received at the other by a high-impedance input,
  which doubles the wave reaching it. Which end holds the receiver is not known, so
  two cases are each evaluated whole: driven from the far end, the receiver sits at
  the aggressor's driver end and sees twice the near-end wave (the far-end wave is
  absorbed by the victim's driver); driven from the same end as the aggressor, the
  receiver sits at the far end and sees twice the far-end wave (the near-end wave is
  absorbed). The NEXT figure is the first case, the FEXT figure the second.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.physics.coupling import WEAK_COUPLING_LIMIT

#: a 10-90 % rise time covers 80 % of a linear ramp
RAMP_PER_RISE_TIME = 1 / 0.8
TERMINATIONS = ("matched", "high-z-receiver")


def ramp_duration_s(rise_time_s):
    """Full ramp duration T = rise_time / 0.8 for a 10-90 % rise time."""
    return np.asarray(rise_time_s, dtype=float) * RAMP_PER_RISE_TIME


def saturation_length_m(velocity_m_per_s, rise_time_s):
    """Coupled length beyond which the near-end noise stops growing: v T / 2."""
    return np.asarray(velocity_m_per_s, dtype=float) * ramp_duration_s(rise_time_s) / 2


def near_end_peak(kb, length_m, velocity_m_per_s, rise_time_s, swing_v):
    """Uniform run: Kb * swing * min(1, 2 TD / T), TD = length / velocity (vectorised)."""
    two_td = 2 * np.asarray(length_m, dtype=float) / velocity_m_per_s
    return np.asarray(kb) * swing_v * np.minimum(1.0, two_td / ramp_duration_s(rise_time_s))


def far_end_peak(kf_s_per_m, length_m, rise_time_s, swing_v, termination="matched"):
    """Uniform run: Kf * length * swing / T, doubled at a high-impedance receiver (signed, vectorised)."""
    return receiver_gain(termination) * np.asarray(kf_s_per_m) * length_m * swing_v / ramp_duration_s(rise_time_s)


def receiver_gain(termination: str) -> float:
    """What the victim's receiver makes of an arriving noise wave: a high-impedance input doubles it
    (reflection coefficient +1); a matched end takes it as it is."""
    if termination not in TERMINATIONS:
        raise ValueError(f"termination must be one of {TERMINATIONS}, got {termination!r}")
    return 2.0 if termination == "high-z-receiver" else 1.0


def _ramp(t, ramp_s):
    return np.clip(t / ramp_s, 0.0, 1.0)


def _pulse(t, ramp_s):
    """Derivative of the unit ramp: 1/T on [0, T)."""
    return np.where((t >= 0) & (t < ramp_s), 1.0 / ramp_s, 0.0)


@dataclass(frozen=True)
class _Run:
    kb: np.ndarray
    kf: np.ndarray
    length_m: np.ndarray
    delay_s: np.ndarray

    @classmethod
    def of(cls, kb, kf, length_m, velocity_m_per_s) -> "_Run":
        kb, kf, length_m, velocity = np.broadcast_arrays(*(np.atleast_1d(np.asarray(a, dtype=float))
                                                           for a in (kb, kf, length_m, velocity_m_per_s)))
        if np.any(length_m < 0) or np.any(velocity <= 0):
            raise ValueError("lengths must not be negative and velocities must be positive")
        return cls(kb, kf, length_m, length_m / velocity)

    def reversed(self) -> "_Run":
        return _Run(self.kb[::-1], self.kf[::-1], self.length_m[::-1], self.delay_s[::-1])

    @property
    def total_delay_s(self) -> float:
        return float(self.delay_s.sum())

    @property
    def forward_sum(self) -> float:
        return float(np.sum(self.kf * self.length_m))

    def near_end(self, t, ramp_s, gain):
        """Near-end voltage per volt of swing at times t (any shape), received with ``gain``."""
        t = np.asarray(t, dtype=float)[..., None]
        start = 2 * (np.cumsum(self.delay_s) - self.delay_s)
        return gain * np.sum(self.kb * (_ramp(t - start, ramp_s) - _ramp(t - start - 2 * self.delay_s, ramp_s)),
                             axis=-1)

    def far_end(self, t, ramp_s, gain):
        return gain * self.forward_sum * _pulse(np.asarray(t, dtype=float) - self.total_delay_s, ramp_s)

    def near_end_extreme(self, ramp_s, gain) -> float:
        """Signed near-end value of largest magnitude: the waveform is piecewise linear, so check breakpoints."""
        start = 2 * (np.cumsum(self.delay_s) - self.delay_s)
        knots = np.concatenate([start, start + 2 * self.delay_s])
        knots = np.concatenate([knots, knots + ramp_s])
        eps = 1e-9 * ramp_s
        t = np.concatenate([knots - eps, knots + eps, knots])
        values = self.near_end(t, ramp_s, gain)
        return float(values[np.argmax(np.abs(values))])


@dataclass(frozen=True)
class VictimNoise:
    """Peaks (V, signed) at the victim's receiver from one aggressor; the worse orientation of the run.

    ``worst_orientation``: 'a' when the driver at the run's first piece gives the
    larger near-end noise, else 'b'. Waveforms are present only when requested.
    """

    next_v: float
    fext_v: float
    worst_orientation: str
    next_v_a: float
    next_v_b: float
    weak_coupling: bool
    time_s: np.ndarray | None = None
    near_end_v: np.ndarray | None = None
    far_end_v: np.ndarray | None = None


def near_end_waveform(time_s, kb, kf, length_m, velocity_m_per_s, rise_time_s, swing_v, termination="matched"):
    """Victim voltage at the near end (the aggressor's driver end) at ``time_s`` with the driver at the first
    piece (t = 0: edge starts); for a high-z-receiver, the receiver sits there (victim driven from the far end)."""
    run = _Run.of(kb, kf, length_m, velocity_m_per_s)
    return swing_v * run.near_end(time_s, float(ramp_duration_s(rise_time_s)), receiver_gain(termination))


def far_end_waveform(time_s, kb, kf, length_m, velocity_m_per_s, rise_time_s, swing_v, termination="matched"):
    """Victim voltage at the far end at ``time_s`` (the same for either driver position); for a
    high-z-receiver, the receiver sits there (victim driven from the same end as the aggressor)."""
    run = _Run.of(kb, kf, length_m, velocity_m_per_s)
    return swing_v * run.far_end(time_s, float(ramp_duration_s(rise_time_s)), receiver_gain(termination))


def piecewise_peaks(kb, kf, length_m, velocity_m_per_s, rise_time_s, swing_v, termination="matched",
                    waveforms: bool = False, time_s: np.ndarray | None = None) -> VictimNoise:
    """NEXT and FEXT peaks for a run made of pieces (arrays, one entry per piece, from end A to end B).

    Near end: sum_k Kb_k (V(t - 2 tau_k) - V(t - 2 tau_k - 2 TD_k)), peak of the sum;
    far end: sum_k Kf_k l_k dV/dt(t - TD_total). With ``waveforms`` the waveforms of the
    worse orientation are returned on ``time_s`` (default: 2000 points up to 2 TD + 3 T).
    """
    run = _Run.of(kb, kf, length_m, velocity_m_per_s)
    ramp_s = float(ramp_duration_s(rise_time_s))
    gain = receiver_gain(termination)
    next_a = swing_v * run.near_end_extreme(ramp_s, gain)
    next_b = swing_v * run.reversed().near_end_extreme(ramp_s, gain)
    worst = "b" if abs(next_b) > abs(next_a) * (1 + 1e-9) else "a"
    fext = gain * swing_v * run.forward_sum / ramp_s
    result = dict(next_v=next_b if worst == "b" else next_a, fext_v=fext, worst_orientation=worst,
                  next_v_a=next_a, next_v_b=next_b,
                  weak_coupling=bool(np.all(np.abs(run.kb) <= WEAK_COUPLING_LIMIT)))
    if waveforms:
        if time_s is None:
            time_s = np.linspace(0.0, 2 * run.total_delay_s + 3 * ramp_s, 2000)
        oriented = run.reversed() if worst == "b" else run
        result.update(time_s=np.asarray(time_s), near_end_v=swing_v * oriented.near_end(time_s, ramp_s, gain),
                      far_end_v=swing_v * oriented.far_end(time_s, ramp_s, gain))
    return VictimNoise(**result)

