"""Rectifier junction laws, vectorised: current and its derivative against voltage.

All functions take and return numpy arrays of any matching shape.
"""

from __future__ import annotations

import numpy as np

#: silicon junction current [A] above which the Shockley exponential is continued
#: linearly (keeps Newton iterates finite; no real rectifier gets near it)
SILICON_LINEAR_ABOVE_A = 1.0e3


def child_langmuir(v: np.ndarray, k: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Anode current of a vacuum diode on the Child-Langmuir (3/2-power) law.

    .. math:: I = K \\, V^{3/2} \\quad (V > 0), \\qquad I = 0 \\quad (V \\le 0)

    Parameters
    ----------
    v : array
        Anode-cathode voltage [V].
    k : array
        Perveance K [A/V^1.5], fixed by one point: K = I_1 / V_1^1.5.

    Returns
    -------
    i : array
        Anode current [A].
    di_dv : array
        Its derivative [S].

    References
    ----------
    .. [1] C. D. Child, "Discharge from hot CaO", Phys. Rev. (Series I) 32, 492 (1911).
    .. [2] I. Langmuir, "The effect of space charge and residual gases on
       thermionic currents in high vacuum", Phys. Rev. 2, 450 (1913).
    """
    vp = np.maximum(v, 0.0)
    root = np.sqrt(vp)
    return k * vp * root, 1.5 * k * root


def shockley(v: np.ndarray, isat: np.ndarray, nvt: np.ndarray,
             v_lin: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Junction current of a silicon diode on the Shockley law.

    .. math:: I = I_s \\left(e^{V/(n V_T)} - 1\\right)

    continued linearly above ``SILICON_LINEAR_ABOVE_A`` so that Newton iterates
    stay finite. The series resistance is a separate element of the netlist.

    Parameters
    ----------
    v : array
        Junction voltage [V].
    isat : array
        Saturation current I_s [A].
    nvt : array
        Emission coefficient times thermal voltage, n·V_T [V].
    v_lin : array, optional
        Where the linear continuation starts [V], n·V_T·ln(1e3 A / I_s); computed
        when not given (callers in a loop pass it once worked out).

    Returns
    -------
    i : array
        Junction current [A].
    di_dv : array
        Its derivative [S].

    References
    ----------
    .. [1] W. Shockley, "The theory of p-n junctions in semiconductors and p-n
       junction transistors", Bell Syst. Tech. J. 28, 435-489 (1949).
    """
    v_lin = _v_lin(nvt, isat) if v_lin is None else v_lin
    e = np.exp(np.minimum(v, v_lin) / nvt)
    i = isat * (e - 1.0)
    g = isat * e / nvt
    above = v > v_lin
    i = np.where(above, i + g * (v - v_lin), i)
    return i, g


def with_constants(law: str, params: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """``params`` with the constants :func:`junction` and :func:`limit_step` would
    otherwise work out at every call (silicon: ``v_lin`` and ``v_crit``)."""
    if law == "valve":
        return params
    nvt, isat = params["nvt"], params["isat"]
    return {**params, "v_lin": _v_lin(nvt, isat), "v_crit": _v_crit(nvt, isat)}


def _v_lin(nvt: np.ndarray, isat: np.ndarray) -> np.ndarray:
    """Voltage above which the Shockley law is continued linearly [V]."""
    return nvt * np.log(SILICON_LINEAR_ABOVE_A / isat)


def _v_crit(nvt: np.ndarray, isat: np.ndarray) -> np.ndarray:
    """SPICE's critical voltage of pn limiting, n·V_T·ln(n·V_T / (√2·I_s)) [V]."""
    return nvt * np.log(nvt / (np.sqrt(2.0) * isat))


def junction(law: str, v: np.ndarray,
             params: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Dispatch to the junction law of a topology ("valve" or "silicon")."""
    if law == "valve":
        return child_langmuir(v, params["k"])
    return shockley(v, params["isat"], params["nvt"], params.get("v_lin"))


def limit_step(law: str, v_new: np.ndarray, v_old: np.ndarray,
               params: dict[str, np.ndarray]) -> np.ndarray:
    """Limit a Newton step on a silicon junction voltage (the classic SPICE pn limiting).

    A step that would raise an already forward-biased junction by more than two
    n·V_T is replaced by a logarithmic one, so the exponential cannot overflow or
    make the iteration oscillate. Valve anodes need no limiting.

    References
    ----------
    .. [1] L. W. Nagel, "SPICE2: A computer program to simulate semiconductor
       circuits", ERL Memo UCB/ERL M520, University of California, Berkeley (1975).
    """
    if law == "valve":
        return v_new
    nvt = params["nvt"]
    v_crit = params.get("v_crit")
    if v_crit is None:
        v_crit = _v_crit(nvt, params["isat"])
    dv = v_new - v_old
    big = (v_new > v_crit) & (np.abs(dv) > 2.0 * nvt)
    if not big.any():
        return v_new
    arg = 1.0 + dv / nvt
    limited = np.where(
        v_old > 0,
        np.where(arg > 0, v_old + nvt * np.log(np.maximum(arg, 1e-300)), v_crit),
        nvt * np.log(np.maximum(v_new / nvt, 1e-300)),
    )
    return np.where(big, limited, v_new)
