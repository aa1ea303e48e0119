"""Per-unit-length line matrices and the line figures derived from them (docs/physics.md §1)."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scanner.units import C0, EPS0, MU0


@dataclass(frozen=True, eq=False)
class LineMatrices:
    """Maxwell capacitance C, vacuum capacitance C0 and inductance L = mu0 eps0 inv(C0), SI per metre.

    Lossless, non-magnetic, quasi-static (TEM) lines; index i is the i-th signal conductor.
    """

    C: np.ndarray
    C0: np.ndarray
    L: np.ndarray

    @classmethod
    def from_capacitances(cls, C: np.ndarray, C0: np.ndarray) -> "LineMatrices":
        C, C0 = np.atleast_2d(C), np.atleast_2d(C0)
        return cls(C, C0, MU0 * EPS0 * np.linalg.inv(C0))

    @property
    def count(self) -> int:
        return self.C.shape[0]

    def z0(self, i: int = 0) -> float:
        """sqrt(L_ii / C_ii): the impedance of line i with its neighbours held at zero volts."""
        return float(np.sqrt(self.L[i, i] / self.C[i, i]))

    def velocity(self, i: int = 0) -> float:
        """1 / sqrt((L C)_ii), m/s.

        For one line this is 1 / sqrt(L C); for a symmetric pair it is the mean of the
        even- and odd-mode 1/v^2; in a homogeneous medium it is exactly c / sqrt(er).
        """
        return float(1 / np.sqrt(self.L[i] @ self.C[:, i]))

    def eps_eff(self, i: int = 0) -> float:
        """(c / v)^2 for line i."""
        return float((C0 / self.velocity(i)) ** 2)

    def _pair(self):
        if self.count != 2:
            raise ValueError("even and odd modes are defined here for two lines")
        return self.L[0, 0], self.L[0, 1], self.C[0, 0], -self.C[0, 1]

    @property
    def z_even(self) -> float:
        """sqrt((L + M) / (C - E)) for two identical lines (L = L11, M = L12, C = C11, E = -C12)."""
        l_self, m, c_self, e = self._pair()
        return float(np.sqrt((l_self + m) / (c_self - e)))

    @property
    def z_odd(self) -> float:
        """sqrt((L - M) / (C + E)) for two identical lines."""
        l_self, m, c_self, e = self._pair()
        return float(np.sqrt((l_self - m) / (c_self + e)))

    @property
    def eps_eff_even(self) -> float:
        l_self, m, c_self, e = self._pair()
        return float(C0 ** 2 * (l_self + m) * (c_self - e))

    @property
    def eps_eff_odd(self) -> float:
        l_self, m, c_self, e = self._pair()
        return float(C0 ** 2 * (l_self - m) * (c_self + e))

    def modes(self) -> tuple[np.ndarray, np.ndarray]:
        """Modal velocities (m/s) and voltage eigenvectors T (columns) of L C."""
        root_c = _sym_sqrt(self.C)
        lam, u = np.linalg.eigh(root_c @ self.L @ root_c)
        return 1 / np.sqrt(lam), np.linalg.solve(root_c, u)

    def characteristic_impedance(self) -> np.ndarray:
        """The symmetric N x N characteristic impedance matrix: Zc C Zc = L (ohm)."""
        root_c = _sym_sqrt(self.C)
        lam, u = np.linalg.eigh(root_c @ self.L @ root_c)
        inv_root = np.linalg.inv(root_c)
        return inv_root @ u @ np.diag(np.sqrt(lam)) @ u.T @ inv_root


def _sym_sqrt(m: np.ndarray) -> np.ndarray:
    w, v = np.linalg.eigh((m + m.T) / 2)
    return v @ np.diag(np.sqrt(w)) @ v.T
