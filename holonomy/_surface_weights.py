"""Monte Carlo on closed surfaces: plane samples weighted into the surface's measure.

Loops are drawn in a chart of the plane (README.md, Closed surfaces). For one loop, let
B be the region it encloses (the union of the bounded faces of its arrangement; for a
lattice loop, the cells its region boundary winds around once) and ``dB`` the boundary
of B run counterclockwise (:meth:`discretize.LatticeLoop.region_boundary`). On a closed
surface of genus g and total measure T the heat-kernel lattice measure is the plane's
measure of the cells of B conditioned on the holonomy of ``dB``: the rest of the
surface is one face of measure ``T - mu(B)`` carrying the g handles, whose law is the
outer face's kernel (:class:`holonomy.exact.OuterFaceKernel`). So for any function f of
the plaquettes of B,

    E_surface[f] = E_plane[f w],   w = K_g(lambda (T - mu(B)), h_dB) / Z_g(lambda T),

with ``h_dB`` the holonomy of ``dB`` in the same sampled field and Z the partition
function; ``E_plane[w] = 1`` exactly (the characters of the plane's boundary holonomy
have ``E[chi_a(h)] = d_a e^{-c_a lambda mu(B) / 2}``). Only the ``heat`` scheme samples
the heat-kernel lattice measure, so only it is weighted.

``dB`` runs along edges of the loop, so its links are among the loop's: the sampling
plan with the boundaries added has the same intervals as the loops' plan and draws the
same numbers (the plane's samples, bitwise); a simple loop is its own boundary (K_g is
a class function, even under inversion) and adds nothing.

References
----------
.. [1] A. A. Migdal, "Recursion equations in gauge field theories", Sov. Phys. JETP 42
   (1975) 413.
.. [2] E. Witten, "On quantum gauge theories in two dimensions", Commun. Math. Phys. 141
   (1991) 153-209.
.. [3] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
   (2003), no. 790 (the surface measure as the plane's conditioned on the boundary).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

from noise import ArgumentError

from .exact import OuterFaceKernel, surface_partition_function

__all__ = ["ClosedSurface", "SurfaceWeights", "SURFACE_SCHEMES"]

#: the schemes whose samples follow the heat-kernel lattice measure (the only ones that
#: are reweighted into a closed surface's measure)
SURFACE_SCHEMES = ("heat",)


@dataclass(frozen=True)
class ClosedSurface:
    """A closed orientable surface: ``genus`` g >= 0 and total measure ``total_area`` T."""

    genus: int
    total_area: float

    def __post_init__(self):
        g = self.genus
        if isinstance(g, bool) or not isinstance(g, numbers.Integral) or g < 0:
            raise ArgumentError("genus", f"got {g!r}; expected an integer >= 0",
                                f"`genus` must be an integer >= 0, got {g!r}.")
        T = self.total_area
        if isinstance(T, bool) or not isinstance(T, numbers.Real) or not \
                (math.isfinite(T) and T > 0):
            raise ArgumentError("total_area", f"got {T!r}; expected a number > 0",
                                f"`total_area` must be a finite number > 0, got {T!r}.")
        object.__setattr__(self, "genus", int(g))
        object.__setattr__(self, "total_area", float(T))


class SurfaceWeights:
    """The weights of one problem's loops on its closed surface.

    Built from a :class:`holonomy.WilsonProblem` with a ``surface``: per loop the
    measure of its enclosed region, the index of its boundary among the sampled
    holonomies (the loops first, then the boundaries of the non-simple loops,
    ``extra``), the outer face's kernel at ``lambda (T - mu(B))``, and Z.
    """

    def __init__(self, problem):
        surface = problem.surface
        group, lam = problem.group, problem.field.coupling
        T, g = surface.total_area, surface.genus
        n = len(problem.lattice_loops)
        extra, index, regions = [], [], []
        for i, loop in enumerate(problem.lattice_loops):
            if loop.simple:
                boundary, k = loop, i
            else:
                boundary, k = loop.region_boundary(), n + len(extra)
                extra.append(boundary)
            # the boundary winds once around the region (counterclockwise, or clockwise
            # for a simple loop run clockwise): its enclosed measure is +-mu(B)
            regions.append(abs(boundary.enclosed_measure(problem.field.area)))
            index.append(k)
            if not T > regions[-1]:
                raise ArgumentError(
                    "surface", f"got the total area {T!r}; expected more than the "
                    f"measure {regions[-1]:.6g} that loops[{i}] encloses on the lattice",
                    f"`total_area` {T!r} must exceed the measure {regions[-1]:.6g} of "
                    f"the region loop {i} encloses on the lattice.")
        self.extra = tuple(extra)
        self.index = tuple(index)
        self.regions = tuple(regions)
        self.times = tuple(lam * (T - r) for r in regions)
        try:
            kernels = {t: OuterFaceKernel(group, g, t) for t in sorted(set(self.times))}
        except ValueError as exc:
            if group.family == "SO" and group.n % 2 == 0 and group.n > 2:  # no kernel
                raise ArgumentError("family", f"got {group}; expected a group whose outer "
                                    f"face's kernel is available on a closed surface ({exc})"
                                    ) from None
            # the character sum too long: an outer face too small against the coupling
            raise ArgumentError("surface", f"got the total area {T!r}: the outer face's "
                                f"kernel cannot be summed ({exc}); expected a larger area "
                                "or coupling") from None
        self.kernels = tuple(kernels[t] for t in self.times)
        self.z = surface_partition_function(group, g, T, coupling=lam)

    def weights(self, holonomies: list, kernel) -> np.ndarray:
        """``w (samples, loops)`` from the holonomies of the loops and the extra
        boundaries (kernel elements, leading axis samples)."""
        cache: dict = {}
        out = []
        for k, K in zip(self.index, self.kernels):
            key = (k, id(K))
            if key not in cache:
                cache[key] = K(kernel.to_matrices(holonomies[k])) / self.z
            out.append(cache[key])
        return np.stack(out, axis=1)
