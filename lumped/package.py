r"""The acoustic surroundings of the capsule in a package: sound port, front chamber, lossy back
volume and a vent channel, as impedances for :mod:`diagap.lumped.circuit`.

Acoustic impedance analogy (pressure ↔ voltage, volume velocity ↔ current), phasors e^{jωt}, SI.

Front path.  The free-field pressure p drives, in series: the radiation load of the port's outer
opening Z_o (baffled piston: Rayleigh's closed form for a circle, its low-ka form
ρck²/(2π) + jωρΔ/S for a slot), half of the port's viscous end resistance, the port itself (the
lossy line of :mod:`diagap.lumped.tubes`, ABCD matrix L), the inner end (mass jωρΔ/S and the
other half of the end resistance), and the front chamber's admittance Y_f
(:mod:`diagap.lumped.cavity`) in shunt at the front node f.  With the chain
M = S_o·L·S_i (S = [[1, Z], [0, 1]] for a series element), p = M₀₀p_f + M₀₁U_f, and the front
node seen by the diaphragm and the vent is the Thévenin source

    p_th = p / (M₀₀ + M₀₁Y_f),     Z_th = M₀₁ / (M₀₀ + M₀₁Y_f).

Noise of the front path.  For a passive network at temperature T the open-circuit pressure noise
at its terminals is 4k_BT·Re Z_th (Nyquist), and by reciprocity the share of each dissipative
element is 4k_BT·P_k, P_k the power it absorbs when a unit volume velocity is driven into the
terminals (``FrontNetwork.dissipation``: "port" — the line, from the power entering and leaving
it, and its end resistance; "front_chamber"; "radiation"); the shares add up to Re Z_th.

End resistance of the port: Sampson's creeping-flow value (:class:`diagap.lumped.tubes.Channel`)
at low frequency, the viscous boundary layer on the wall around the openings at high frequency,
√(2ωρμ)/(2S) for both ends together (Maa, J. Acoust. Soc. Am. 104, 1998, 2861 [from memory]),
joined as √(R_S² + R_bl²) — our blend of the two limits, not checked between them.

Helmholtz resonance of the front path (lossless, front chamber alone):
f_H = (c/2π)·√(S/(V_f·L_eff)), L_eff = L + 2Δ (Kinsler et al., *Fundamentals of Acoustics*,
2000, §10.8).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from diagap.lumped.cavity import Cavity
from diagap.lumped.tubes import Channel, Gas, TubeError

__all__ = ["PackageAcoustics", "FrontNetwork", "front_resonance_hz"]


@dataclass(frozen=True, eq=False)
class FrontNetwork:
    """The front path at each frequency: p_th/p, Z_th (Pa·s/m³) and each element's dissipation
    under a unit drive at the front node (Pa·s/m³; they add up to Re Z_th)."""

    transfer: np.ndarray
    impedance: np.ndarray
    dissipation: dict


def _series(z) -> np.ndarray:
    m = np.zeros(np.shape(z) + (2, 2), complex)
    m[..., 0, 0] = m[..., 1, 1] = 1.0
    m[..., 0, 1] = z
    return m


@dataclass(frozen=True)
class PackageAcoustics:
    """Optional acoustic elements around the capsule (any may be None).

    Parameters
    ----------
    gas : :class:`diagap.lumped.tubes.Gas`
    port : sound inlet channel (its outer end radiates into the half space), or None.
    front_chamber : :class:`Cavity` between the port and the diaphragm, or None (needs a port).
    back_volume : lossy back volume replacing the adiabatic V/(γp0), or None.
    vent : the static-pressure equalisation channel, front node to back volume, or None.
    """

    gas: Gas
    port: Channel | None = None
    front_chamber: Cavity | None = None
    back_volume: Cavity | None = None
    vent: Channel | None = None

    def __post_init__(self):
        if self.front_chamber is not None and self.port is None:
            raise TubeError("front_chamber: needs a port (the chamber's opening to the sound field)")

    @property
    def has_front_path(self) -> bool:
        return self.port is not None

    def without_front(self) -> "PackageAcoustics | None":
        """The same surroundings without port and front chamber (None if nothing is left)."""
        if self.back_volume is None and self.vent is None:
            return None
        return replace(self, port=None, front_chamber=None)

    def _end_resistance(self, w: np.ndarray) -> np.ndarray:
        gas, port = self.gas, self.port
        r_s = port.end_resistance_pa_s_per_m3(gas)
        r_bl = np.sqrt(2.0 * w * gas.density_kg_m3 * gas.viscosity_pa_s) / (2.0 * port.area_m2)
        return np.sqrt(r_s**2 + r_bl**2)

    def radiation_impedance(self, omega) -> np.ndarray:
        """Load of the port's outer opening (Pa·s/m³)."""
        from diagap.fem.response.coupled import piston_radiation

        w = np.atleast_1d(np.asarray(omega, float))
        g, port = self.gas, self.port
        if port.radius_m is not None:
            return piston_radiation(w, port.radius_m, g.density_kg_m3, g.sound_speed_m_s)
        k = w / g.sound_speed_m_s
        return (g.density_kg_m3 * g.sound_speed_m_s * k**2 / (2.0 * math.pi)
                + 1j * w * g.density_kg_m3 * port.end_correction_m / port.area_m2)

    def front_network(self, freqs_hz) -> FrontNetwork | None:
        """Thévenin source of the front path at ``freqs_hz`` (None without a port)."""
        if self.port is None:
            return None
        w = 2.0 * np.pi * np.atleast_1d(np.asarray(freqs_hz, float))
        gas, port = self.gas, self.port
        r_end = self._end_resistance(w)
        z_rad = self.radiation_impedance(w)
        z_out = z_rad + 0.5 * r_end
        z_in = 1j * w * gas.density_kg_m3 * port.end_correction_m / port.area_m2 + 0.5 * r_end
        line = port.abcd(w, gas)
        m = _series(z_out) @ line @ _series(z_in)
        y_f = (self.front_chamber.admittance(w, gas) if self.front_chamber is not None
               else np.zeros(w.shape, complex))
        den = m[:, 0, 0] + m[:, 0, 1] * y_f
        z_th = m[:, 0, 1] / den
        # unit volume velocity driven into the front node, field pressure zero
        p_f = z_th
        j_in = 1.0 - y_f * p_f                          # outward through the port
        p_i = p_f - z_in * j_in                         # line, inner end
        p_o = line[:, 0, 0] * p_i - line[:, 0, 1] * j_in
        j_o = -(line[:, 1, 0] * p_i - line[:, 1, 1] * j_in)
        line_loss = (p_i * np.conj(j_in)).real - (p_o * np.conj(j_o)).real
        ends = 0.5 * r_end * (np.abs(j_in) ** 2 + np.abs(j_o) ** 2)
        parts = {"port": line_loss + ends, "radiation": z_rad.real * np.abs(j_o) ** 2}
        if self.front_chamber is not None and self.front_chamber.wall_area_m2 is not None:
            parts["front_chamber"] = y_f.real * np.abs(p_f) ** 2
        return FrontNetwork(1.0 / den, z_th, parts)

    def back_admittance(self, freqs_hz) -> np.ndarray | None:
        """Admittance jωC(ω) of the lossy back volume (m³/(Pa·s)), None without one."""
        if self.back_volume is None:
            return None
        w = 2.0 * np.pi * np.atleast_1d(np.asarray(freqs_hz, float))
        return self.back_volume.admittance(w, self.gas)

    def vent_impedance(self, freqs_hz) -> np.ndarray | None:
        """Series impedance of the vent channel with its ends (Pa·s/m³), None without one."""
        if self.vent is None:
            return None
        w = 2.0 * np.pi * np.atleast_1d(np.asarray(freqs_hz, float))
        return self.vent.series_impedance(w, self.gas)

    def helmholtz_lossless_hz(self) -> float | None:
        """(c/2π)·√(S/(V_f·L_eff)) of the port and front chamber (None without both)."""
        if self.port is None or self.front_chamber is None:
            return None
        port = self.port
        l_eff = port.length_m + 2.0 * port.end_correction_m
        return (self.gas.sound_speed_m_s / (2.0 * math.pi)
                * math.sqrt(port.area_m2 / (self.front_chamber.volume_m3 * l_eff)))


def front_resonance_hz(model, f_low_hz: float = 1e3, f_high_hz: float = 3e5) -> float | None:
    """Frequency of the peak of |p_f/p|, the pressure at the diaphragm's front per free-field
    pressure, of a model with a front path (the loaded Helmholtz resonance of port and front
    chamber); None without a front path or without an interior peak in [f_low, f_high]."""
    from scipy.optimize import minimize_scalar

    from diagap.lumped.circuit import solve_circuit

    if model.package is None or not model.package.has_front_path:
        return None

    def gain(f):
        return np.abs(solve_circuit(model, f).front_pressure(pressure_pa=1.0))

    grid = np.geomspace(f_low_hz, f_high_hz, 241)
    g = gain(grid)
    i = int(np.argmax(g))
    if i == 0 or i == grid.size - 1:
        return None
    res = minimize_scalar(lambda lf: -gain([10.0**lf])[0], method="bounded",
                          bounds=(np.log10(grid[i - 1]), np.log10(grid[i + 1])),
                          options={"xatol": 1e-10})
    return float(10.0**res.x)
