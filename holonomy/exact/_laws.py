"""Conjugation-invariant laws of independent face variables.

The exact evaluation needs, for each face variable X and each irreducible
representation sigma met in the contraction, the normalized character expectation
``w_sigma = E[chi_sigma(X)] / dim sigma``: a conjugation-invariant law has
``E[sigma(X)] = w_sigma Id`` (Schur's lemma), so its moment tensors are
``sum_sigma w_sigma P_sigma`` over the isotypic projectors ``P_sigma``. A product of
independent such variables has the product of the ``w`` (convolution), written ``+``
here so that merging two variables adds their laws as it adds heat-kernel times.

- a number t (real, negative or complex): Brownian motion at time t,
  ``w_sigma = exp(-c_sigma t / 2)`` (the continuum and the ``heat`` scheme);
- :class:`WilsonLaw`: the product of ``cells`` independent one-plaquette Wilson
  variables, density ``exp(b Re tr P)`` against Haar, ``b = k / s``
  (:func:`holonomy.exact._characters.wilson_character`).

References
----------
.. [1] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
   (2003), no. 790 (independent lassos; the discrete measure with any class-function
   weight, convolution when faces merge).
.. [2] A. A. Migdal, "Recursion equations in gauge field theories", Sov. Phys. JETP
   42 (1975) 413-418 (exact decimation of two-dimensional lattice gauge theories).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ._characters import BesselRangeError, wilson_character

__all__ = ["WilsonLaw", "ExactRouteError", "law_character"]


class ExactRouteError(ValueError):
    """No exact route applies; ``limit`` says which: ``"size"``, ``"representation"``,
    ``"geometry"``, ``"group"`` or ``"precision"`` (the closed form leaves the range
    its double-precision routes cover, at an extreme coupling or density)."""

    def __init__(self, limit: str, message: str):
        super().__init__(f"{limit} limit: {message}")
        self.limit = limit
        self.message = message

    def __reduce__(self):
        # rebuilt from both arguments: the series command's child processes send it back
        return (type(self), (self.limit, self.message))


@dataclass(frozen=True)
class WilsonLaw:
    """The product of ``cells`` independent one-plaquette Wilson variables of a group
    ``family(N)`` with metric constant ``k``, each with density ``exp(b Re tr P)``.

    ``parts`` holds ``(b, cells)`` pairs, so a face made of cells of different
    densities is a product of laws.
    """

    family: str
    N: int
    k: float
    parts: tuple = field(default=())

    @classmethod
    def plaquettes(cls, family, N, k, b, cells) -> "WilsonLaw":
        return cls(family, N, float(k), ((float(b), int(cells)),))

    def _label(self, c: float, weight):
        if weight is not None:
            return tuple(int(x) for x in weight)
        # the Casimir identifies the irreducible for U(1) (charge |q|: the law is
        # symmetric under q -> -q) and for SU(2) (spin j)
        if self.family == "U" and self.N == 1:
            q = math.sqrt(max(c * self.k, 0.0))
            if abs(q - round(q)) > 1e-6:
                raise ExactRouteError("representation", f"Casimir {c} is not a U(1) charge")
            return (int(round(q)),)
        if self.family in ("SU", "Sp") and self.N == 2:
            j2 = math.sqrt(1 + 2 * c * self.k) - 1  # c = 2 j (j + 1) / k
            if abs(j2 - round(j2)) > 1e-6:
                raise ExactRouteError("representation", f"Casimir {c} is not an SU(2) spin")
            return (int(round(j2)), 0)
        raise ExactRouteError(
            "representation",
            f"the Wilson action on {self.family}({self.N}) needs the irreducible "
            "components by highest weight, and the tensor route only sees Casimir "
            "values (which do not identify them beyond U(1) and SU(2))")

    def character(self, c: float, weight=None) -> float:
        lam = self._label(c, weight)
        fam = "SU" if self.family == "Sp" else self.family
        out = 1.0
        for b, cells in self.parts:
            try:
                w = wilson_character(fam, lam, b)
            except BesselRangeError as exc:
                raise ExactRouteError("precision", str(exc)) from None
            out *= w ** cells
        return out

    def __add__(self, other):
        if other == 0:
            return self
        if isinstance(other, WilsonLaw):
            return WilsonLaw(self.family, self.N, self.k, self.parts + other.parts)
        return NotImplemented

    __radd__ = __add__


def law_character(law, c: float, weight=None):
    """``E[chi_sigma(X)] / dim sigma`` for a face variable's law: a heat-kernel time
    (number) or a :class:`WilsonLaw`; ``c`` the Casimir of sigma, ``weight`` its highest
    weight when known."""
    if isinstance(law, WilsonLaw):
        return law.character(c, weight)
    return np.exp(-c * law / 2)
