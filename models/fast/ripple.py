"""The axial force on the target at twice the drive frequency (its ripple) and in time.

Every loop carries i(t) = sqrt(2) Re(I exp(j omega t)) for its rms phasor I (the coil's
sub-cells, the ring's and the target's cells, and the pole's bound sheet currents, which the
laminated pole's complex permeability puts out of phase with their sources: they are loops of the
same kind, models.fast.pole). The instantaneous product of two currents is::

    i_i(t) i_j(t) = 2 Re(I_i e^{jwt}) Re(I_j e^{jwt})
                  = Re(I_i conj(I_j)) + Re(I_i I_j e^{2jwt})

(2 Re(a) Re(b) = Re(a conj(b)) + Re(a b)), so the pull in time is::

    pull(t) = pull_N + Re(P2 e^{2j omega t}),
    P2      = - sum_{i in target} sum_{j not in target} I_i I_j dM_ij/dz_i

with ``pull_N`` the time average of models.fast.pull (the conjugated products) and P2 the same
sum of the non-conjugated ones, with no factor between them for rms phasors. ``pull_ripple``
is |P2|, the amplitude of the 2f component: the pull swings between pull_N - |P2| and
pull_N + |P2| twice a period. A single shorted ring beside a coil carries
I_r = -j omega M I / (R + j omega L) (Lenz), so its mean force is -|I|^2 omega^2 M L
dM/dz / (R^2 + omega^2 L^2) (repulsion) and its ripple |I|^2 omega M |dM/dz| / sqrt(R^2 +
omega^2 L^2): ripple / |mean| = sqrt(1 + (R / omega L)^2) >= 1, equal in the inductive limit
(F proportional to cos^2: the force falls to zero twice a cycle, which is why AC relays carry a
shading ring; from memory, e.g. Roters, Electromagnetic Devices, 1941, on AC magnets).
"""

from __future__ import annotations

import numpy as np

from models.fast.circuit import TARGET, CircuitSolution

__all__ = ["pair_force_phasors", "pull_twice_frequency", "pull_ripple", "pull_waveform"]


def pair_force_phasors(i_target, i_source, dMdz) -> tuple[float, complex]:
    """The mean pull [N] and its 2f phasor P2 [N] of target loops in the field of source loops.

    Parameters
    ----------
    i_target : complex array, shape (n,)
        Rms current phasors of the target's loops [A].
    i_source : complex array, shape (m,)
        Rms current phasors of the loops acting on them [A].
    dMdz : array, shape (n, m)
        dM_ij/dz_i [H/m], the derivative in the target loop's axial position.

    Returns
    -------
    (float, complex)
        ``pull = -sum Re(I_i conj(I_j)) dM_ij/dz_i`` [N] and
        ``P2 = -sum I_i I_j dM_ij/dz_i`` [N] (module docstring): pull(t) = pull + Re(P2 e^{2jwt}).
    """
    i_t = np.asarray(i_target, complex)
    i_s = np.asarray(i_source, complex)
    d = np.asarray(dMdz)
    mean = -float(np.real(i_t @ (d @ np.conj(i_s))))
    p2 = -complex(i_t @ (d @ i_s))
    return mean, p2


def pull_twice_frequency(sol: CircuitSolution) -> complex:
    """P2 [N]: the 2f phasor of the pull of a solved circuit (pull(t) = pull_N + Re(P2 e^{2jwt});
    module docstring), over every loop outside the target (coil, ring, pole sheet currents)."""
    part = sol.cells.part
    tgt = part == TARGET
    i_t = sol.cell_current[tgt]
    other = ~tgt
    _, p2 = pair_force_phasors(i_t, sol.cell_current[other], sol.dMdz[np.ix_(tgt, other)])
    if sol.panel_dMdz is not None and sol.panel_current.size:
        _, p2_pole = pair_force_phasors(i_t, sol.panel_current, sol.panel_dMdz[tgt])
        p2 += p2_pole
    return complex(p2)


def pull_ripple(sol: CircuitSolution) -> float:
    """Amplitude [N] of the pull's component at twice the drive frequency, |P2| (module
    docstring): the pull swings between pull_N - ripple and pull_N + ripple."""
    return float(abs(pull_twice_frequency(sol)))


def pull_waveform(sol: CircuitSolution, samples: int = 64) -> tuple[np.ndarray, np.ndarray]:
    """The pull over one period [N], from the instantaneous currents: the check of P2.

    Each loop's current at ``samples`` instants t_k = k T / samples is sqrt(2) Re(I e^{j w t_k})
    (rms phasors), and the force is -sum i_i(t) i_j(t) dM_ij/dz_i over target loops i and all
    other loops j (coil sub-cells, ring cells, pole sheet currents), the same matrices as the
    time average.

    Returns
    -------
    (t, pull) : arrays, shape (samples,)
        Instants [s] over one period of the drive and the pull at each [N] (positive toward the
        face).
    """
    part = sol.cells.part
    tgt = part == TARGET
    omega = sol.omega
    t = np.arange(samples) * (2.0 * np.pi / omega) / samples
    phase = np.exp(1j * omega * t)  # (samples,)

    def inst(current):
        return np.sqrt(2.0) * np.real(np.outer(phase, current))  # (samples, loops)

    i_t = inst(sol.cell_current[tgt])
    i_o = inst(sol.cell_current[~tgt])
    force = -np.einsum("ki,ij,kj->k", i_t, sol.dMdz[np.ix_(tgt, ~tgt)], i_o)
    if sol.panel_dMdz is not None and sol.panel_current.size:
        force -= np.einsum("ki,ij,kj->k", i_t, sol.panel_dMdz[tgt], inst(sol.panel_current))
    return t, force
