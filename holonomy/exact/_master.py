"""The master field: Wilson loops of U(N) as N -> infinity (metric ``large-n``).

As N -> infinity the lasso variables of a planar loop (independent Brownian motions
on U(N), one per face, at times ``lambda mu(F)``) converge in noncommutative
distribution to free unitary Brownian motions (Biane 1997; Levy 2011), so the master
field of a loop with word ``w`` in the face variables is ``tau(w)`` computed with the
rules of freeness: ``tau(u_t^n) = nu_n(t)`` (Biane's moments,
:func:`holonomy.exact.free_unitary_moment`) and
``tau(a_1 ... a_m) = 0`` when every ``a_i`` is centred and consecutive factors lie in
different variables' algebras (Voiculescu). Writing each factor as its centred part
plus its mean and expanding one factor at a time gives a finite recursion on
alternating words of Laurent polynomials in one variable each.

The result satisfies the Makeenko-Migdal equations at every crossing with the
boundary condition that the unbounded face carries no area (Levy 2011, Thm. 5.x,
numbering from memory; Kazakov and Kostov 1980); the tests check them by finite
differences on loops with several crossings.

References
----------
.. [1] P. Biane, "Free Brownian motion, free stochastic calculus and random
   matrices", Fields Inst. Commun. 12 (1997) 1-19.
.. [2] T. Levy, "The master field on the plane", Asterisque 388 (2017);
   arXiv:1112.2452 (2011).
.. [3] V. A. Kazakov, I. K. Kostov, "Non-linear strings in two-dimensional U(infinity)
   gauge theory", Nucl. Phys. B 176 (1980) 199-215.
.. [4] D. V. Voiculescu, K. J. Dykema, A. Nica, "Free Random Variables", CRM
   Monograph Series 1, AMS (1992), ch. 2 (freeness, centred alternating products).
"""

from __future__ import annotations

from ._unitary import free_unitary_moment

__all__ = ["master_field_word"]


def _mul(p: dict, q: dict) -> dict:
    out: dict = {}
    for a, x in p.items():
        for b, y in q.items():
            out[a + b] = out.get(a + b, 0) + x * y
    return {e: c for e, c in out.items() if c != 0}


def _blocks(word):
    """Cyclic runs of one variable: [(variable, {exponent: coeff})]."""
    blocks: list = []
    for x in word:
        v, e = abs(x), (1 if x > 0 else -1)
        if blocks and blocks[-1][0] == v:
            p = _mul(blocks[-1][1], {e: 1})
            blocks[-1] = (v, p, False)
        else:
            blocks.append((v, {e: 1}, False))
    return _merge_ends(blocks)


def _merge_ends(blocks):
    while len(blocks) >= 2 and blocks[0][0] == blocks[-1][0]:
        v = blocks[0][0]
        blocks = [(v, _mul(blocks[-1][1], blocks[0][1]), False)] + blocks[1:-1]
    return blocks


def master_field_word(word, times) -> complex:
    """``tau(word)`` for free unitary Brownian motions ``u_f`` at times ``times[f - 1]``
    (the ``large-n`` normalization: ``tau(u_t) = exp(-t / 2)``).

    Parameters
    ----------
    word : sequence of int
        Letters ``+f`` / ``-f`` (1-based), read left to right.
    times : sequence of float or complex

    Returns
    -------
    complex

    Examples
    --------
    >>> from holonomy.exact import master_field_word
    >>> round(master_field_word([1, 1], [1.0]).real, 12)  # nu_2(1) = e^{-1} (1 - 1)
    0.0
    """
    times = [complex(t) for t in times]
    memo: dict = {}

    def phi(v, poly):
        return sum(c * (1.0 if e == 0 else free_unitary_moment(abs(e), times[v - 1]))
                   for e, c in poly.items())

    def tau(blocks) -> complex:
        if not blocks:
            return 1.0
        if len(blocks) == 1:
            v, poly, centred = blocks[0]
            return 0.0 if centred else phi(v, poly)
        key = tuple((v, tuple(sorted(p.items())), c) for v, p, c in blocks)
        if key in memo:
            return memo[key]
        i = next((i for i, b in enumerate(blocks) if not b[2]), None)
        if i is None:  # centred, alternating: zero by freeness
            memo[key] = 0.0
            return 0.0
        v, poly, _ = blocks[i]
        m = phi(v, poly)
        centred = dict(poly)
        centred[0] = centred.get(0, 0) - m
        centred = {e: c for e, c in centred.items() if c != 0}
        total = 0.0
        if centred:
            total += tau(blocks[:i] + [(v, centred, True)] + blocks[i + 1:])
        if m != 0:
            rest = blocks[:i] + blocks[i + 1:]
            # neighbours of the removed factor may now be in the same algebra
            if 0 < i < len(blocks) - 1 and rest[i - 1][0] == rest[i][0]:
                a, b = rest[i - 1], rest[i]
                rest = rest[:i - 1] + [(a[0], _mul(a[1], b[1]), False)] + rest[i + 1:]
            total += m * tau(_merge_ends(rest))
        memo[key] = total
        return total

    return complex(tau(_blocks(list(word))))
