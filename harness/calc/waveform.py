"""Waveform correction of the no-load loss (mean-value voltmeter U', rms voltmeter U).

The test is set on U' (rms-scaled mean value), which fixes the peak flux; a distorted supply
moves the eddy-current part of the loss with the rms value. Pure functions on floats.
"""

from __future__ import annotations


def deviation(u_mean: float, u_rms: float) -> float:
    """d = (U' - U) / U' of IEC 60076-1 (per unit)."""
    return (u_mean - u_rms) / u_mean


def iec_factor(u_mean: float, u_rms: float) -> float:
    """P0 / Pm = 1 + d (IEC 60076-1:2011)."""
    return 1.0 + deviation(u_mean, u_rms)


def ieee_factor(u_mean: float, u_rms: float, p1: float = 0.5, p2: float = 0.5) -> float:
    """P0 / Pm = 1 / (P1 + k P2), k = (U / U')^2 (IEEE C57.12.90; IEC 60076-1:1993)."""
    k = (u_rms / u_mean) ** 2
    return 1.0 / (p1 + k * p2)


def factor(form: str, u_mean: float, u_rms: float, p1: float = 0.5, p2: float = 0.5) -> float:
    return iec_factor(u_mean, u_rms) if form == "iec" else ieee_factor(u_mean, u_rms, p1, p2)
