"""Lasso decomposition of a planar loop and reduction of words in face variables.

A word is a tuple of nonzero integers: letter ``+f`` is the face variable ``X_f`` (faces
numbered from 1) and ``-f`` its inverse; the word is read left to right as a matrix
product, in the order the loop is traversed.

Lasso decomposition (tree gauge)
--------------------------------
On the planar graph of a loop (see :func:`discretize.arrangement`), the discrete
Yang-Mills measure on the plane gives the edge variables the density
``prod_F p_{lambda |F|}(h_{dF})`` against Haar measure, one heat-kernel factor per bounded
face [1]_ [2]_. Fix a spanning tree ``T`` of the graph rooted at the base point
(vertex 0, the loop's first vertex) and set its edges to the identity (a gauge
transformation, which does not change the law of holonomies of loops based at the root).
The edges not in ``T`` are dual to a spanning tree of the dual graph [3]_; root it at
the unbounded face. Each bounded face ``F`` then owns one edge ``e_F`` (the dual edge to
its parent), and its boundary read from the tail of ``e_F`` is
``h_{e_F}^s W_F`` with ``W_F`` a word in the edges of its children only. Setting
``X_F = h_{e_F}^s W_F`` is, child faces held fixed, a Haar-preserving translation of
``h_{e_F}``; processing faces from the leaves up shows that the ``X_F`` are independent
with laws ``p_{lambda |F|}``. ``X_F`` is the holonomy of the lasso that runs along ``T``
to ``F``, once around ``dF`` counterclockwise, and back. Solving
``h_{e_F} = (X_F W_F^{-1})^s`` recursively writes every edge, hence the loop, as a word
in the ``X_F``. Its abelianization is the vector of winding numbers (tested).

Reduction
---------
For ``E[tr pi(word)]`` the word may be freely and cyclically reduced (trace is
conjugation invariant); two variables that only ever occur as one block ``X Y^e`` may be
merged into one variable with the summed time (the product of independent Brownian
increments is a Brownian increment); a variable occurring once has, by independence and
conjugation invariance, the factor ``E[pi(X)] = exp(-c t / 2) Id`` and is dropped.

References
----------
.. [1] T. Levy, "Yang-Mills measure on compact surfaces", Mem. Amer. Math. Soc. 166
   (2003), no. 790, ch. 2.
.. [2] B. K. Driver, "YM2: continuum expectations, lattice convergence, and lassos",
   Comm. Math. Phys. 123 (1989), 575-616.
.. [3] T. Levy, "Two-dimensional Markovian holonomy fields", Asterisque 329 (2010),
   sec. 1.3 and 2.4 (spanning trees, lassos and the free group of reduced loops).
"""

from __future__ import annotations

from collections import deque

from dataclasses import dataclass

__all__ = [
    "lasso_word",
    "lasso_words",
    "outer_boundary_word",
    "free_reduce",
    "cyclic_reduce",
    "inverse_word",
    "reduce_for_trace",
    "reduce_for_traces",
    "ReducedWord",
]


def inverse_word(word) -> tuple[int, ...]:
    """The inverse of a word: reversed, each letter inverted."""
    return tuple(-x for x in reversed(word))


def free_reduce(word) -> tuple[int, ...]:
    """Cancel adjacent pairs ``x x^{-1}`` until none is left."""
    out: list[int] = []
    for x in word:
        if out and out[-1] == -x:
            out.pop()
        else:
            out.append(int(x))
    return tuple(out)


def cyclic_reduce(word) -> tuple[int, ...]:
    """Free reduction followed by cancelling the ends against each other."""
    w = free_reduce(word)
    i, j = 0, len(w)
    while j - i >= 2 and w[i] == -w[j - 1]:
        i, j = i + 1, j - 1
    return w[i:j]


def lasso_word(arr) -> tuple[int, ...]:
    """The loop of an arrangement as a word in independent lasso variables.

    The first curve's word of :func:`lasso_words`.
    """
    return lasso_words(arr)[0]


def lasso_words(arr) -> tuple[tuple[int, ...], ...]:
    """The curves of an arrangement as words in the same independent lasso variables.

    Parameters
    ----------
    arr : discretize.Arrangement
        The arrangement of the loops (:func:`discretize.arrangement` or
        :func:`discretize.joint_arrangement`); the root of the spanning tree is graph
        vertex 0, each curve is read from its first vertex along ``arr.paths`` (tree
        edges carry the identity, so the base point only conjugates the word) and all
        its turns are included.

    Returns
    -------
    tuple of tuple of int
        One freely reduced word per curve; letter ``f`` (1-based) stands for the lasso
        around bounded face ``f - 1`` of ``arr``, traversed counterclockwise.

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003), ch. 2; Asterisque 329 (2010).
    """
    half_word = _half_words(arr)
    words = []
    for path, turns in zip(arr.paths, arr.curve_turns):
        one_turn: list[int] = []
        for h in path.tolist():
            one_turn.extend(half_word(h))
        words.append(free_reduce(tuple(one_turn) * turns))
    return tuple(words)


def outer_boundary_word(arr) -> tuple[int, ...]:
    """The boundary of the bounded part of an arrangement (the unbounded face's
    boundary, ``arr.outer_cycle``) as a word in the lasso variables of
    :func:`lasso_words`.

    Its holonomy is the holonomy of the boundary of the drawn region, up to
    conjugation and orientation (it runs clockwise around the bounded faces: its
    abelianization is -1 on every bounded face). On a closed surface it is the
    holonomy the outer face's kernel is evaluated at.

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003), ch. 2 (the boundary of a union of
       faces as a product of lassos).
    """
    if arr.outer_cycle is None:
        raise ValueError("`arr` carries no outer cycle (built by an older arrangement).")
    half_word = _half_words(arr)
    word: list[int] = []
    for h in arr.outer_cycle.tolist():
        word.extend(half_word(h))
    return cyclic_reduce(tuple(word))


def _half_words(arr):
    """``half_word(h)``: the holonomy of half-edge h as a word in the lasso variables
    (tree-cotree construction of the module docstring)."""
    edges = arr.edges
    ne, nv = len(edges), len(arr.vertices)
    adj: list[list[tuple[int, int]]] = [[] for _ in range(nv)]
    for e, (u, w) in enumerate(edges.tolist()):
        adj[u].append((w, e))
        adj[w].append((u, e))
    # spanning tree of the graph, breadth first from the base point
    tree, seen, queue = set(), {0}, deque([0])
    while queue:
        u = queue.popleft()
        for w, e in adj[u]:
            if w not in seen:
                seen.add(w)
                tree.add(e)
                queue.append(w)
    # the remaining edges form a spanning tree of the dual graph; root it outside
    left, right = arr.left_face.tolist(), arr.right_face.tolist()
    dual: dict[int, list[tuple[int, int]]] = {}
    for e in range(ne):
        if e not in tree:
            dual.setdefault(left[e], []).append((right[e], e))
            dual.setdefault(right[e], []).append((left[e], e))
    owner: dict[int, int] = {}  # non-tree edge -> the child face it belongs to
    seen_f, queue = {-1}, deque([-1])
    while queue:
        f = queue.popleft()
        for g, e in dual.get(f, ()):
            if g not in seen_f:
                seen_f.add(g)
                owner[e] = g
                queue.append(g)
    if len(owner) != ne - len(tree) or len(seen_f) != arr.n_faces + 1:
        raise RuntimeError("tree-cotree duality failed; the arrangement is inconsistent")

    cycles = [c.tolist() for c in arr.face_cycles]
    memo: dict[int, tuple[int, ...]] = {}

    def edge_word(e: int) -> tuple[int, ...]:
        # h_e (forward) as a word in the X_F
        if e in memo:
            return memo[e]
        f = owner[e]
        cyc = cycles[f]
        pos = cyc.index(2 * e) if 2 * e in cyc else cyc.index(2 * e + 1)
        rest = cyc[pos + 1:] + cyc[:pos]
        w_f: list[int] = []
        for h in rest:
            w_f.extend(half_word(h))
        hs = (f + 1,) + inverse_word(w_f)  # h_{e_F}^s = X_F W_F^{-1}
        word = hs if cyc[pos] == 2 * e else inverse_word(hs)
        memo[e] = free_reduce(word)
        return memo[e]

    def half_word(h: int) -> tuple[int, ...]:
        e = h // 2
        if e in tree:
            return ()
        return edge_word(e) if h % 2 == 0 else inverse_word(edge_word(e))

    return half_word


@dataclass(frozen=True)
class ReducedWord:
    """A word reduced for the expectation of its trace.

    Attributes
    ----------
    word : tuple of int
        Cyclically reduced word in the remaining variables (1-based letters), each
        occurring at least twice, no two always adjacent.
    times : tuple
        Heat-kernel time of each remaining variable (``times[f - 1]`` for letter f).
    dropped : tuple
        Times of the variables that occurred once; each contributes the scalar factor
        ``E[pi(X)] = exp(-c t / 2)``.
    words : tuple of tuple
        All reduced words (several for a correlator; ``word`` is the first).
    """

    word: tuple
    times: tuple
    dropped: tuple
    words: tuple = ()


def _merge_once(words, times):
    """Merge one pair of variables that always occur as the block ``x y^e`` (in every
    occurrence, across all the cyclic words)."""
    occ: dict[int, list[tuple[int, int]]] = {}
    for wi, word in enumerate(words):
        for k, x in enumerate(word):
            occ.setdefault(abs(x), []).append((wi, k))

    def partner(wi, k):
        # the letter after +x, or the inverse of the letter before -x
        word = words[wi]
        n = len(word)
        return word[(k + 1) % n] if word[k] > 0 else -word[(k - 1) % n]

    for x, ks in occ.items():
        wi0, k0 = ks[0]
        if len(words[wi0]) < 2:
            continue
        nxt = partner(wi0, k0)
        y = abs(nxt)
        if y == x or len(occ.get(y, ())) != len(ks):
            continue
        if not all(len(words[wi]) >= 2 and partner(wi, k) == nxt for wi, k in ks):
            continue
        skip = set()
        for wi, k in ks:
            n = len(words[wi])
            skip.add((wi, (k + 1) % n if words[wi][k] > 0 else (k - 1) % n))
        out = [[x_ for k, x_ in enumerate(word) if (wi, k) not in skip]
               for wi, word in enumerate(words)]
        new_times = list(times)
        new_times[x - 1] = times[x - 1] + times[y - 1]
        return out, new_times, y
    return None


def _relabel(words, times):
    used = sorted({abs(x) for word in words for x in word})
    label = {v: i + 1 for i, v in enumerate(used)}
    ws = tuple(tuple(label[abs(x)] * (1 if x > 0 else -1) for x in word) for word in words)
    return ws, tuple(times[v - 1] for v in used)


def reduce_for_trace(word, times, *, drop_single: bool = True) -> ReducedWord:
    """Reduce a word for ``E[tr pi(word)]`` with independent conjugation-invariant,
    inversion-invariant variables (heat-kernel increments).

    Parameters
    ----------
    word : sequence of int
        Letters ``+f`` / ``-f`` (faces 1-based).
    times : sequence
        Heat-kernel time of each variable (numbers or sympy expressions).
    drop_single : bool, optional
        Drop variables occurring once (valid when ``E[pi(X)]`` is a multiple of the
        identity, e.g. ``pi`` irreducible). Default True.

    Returns
    -------
    ReducedWord

    References
    ----------
    .. [1] T. Levy, Mem. Amer. Math. Soc. 166 (2003), ch. 2 (independence and
       conjugation invariance of lasso holonomies; convolution of heat kernels).
    """
    r = reduce_for_traces([word], times, drop_single=drop_single)
    return r


def reduce_for_traces(words, times, *, drop_single: bool = True) -> ReducedWord:
    """Reduce several words for ``E[prod_i tr pi(word_i)]`` (same rules as
    :func:`reduce_for_trace`, applied jointly: a variable is dropped when it occurs
    once in all the words together, merged when its every occurrence is the same
    block). ``ReducedWord.words`` holds the reduced words, in order."""
    ws = [list(cyclic_reduce(w)) for w in words]
    t = list(times)
    dropped: list = []
    changed = True
    while changed:
        changed = False
        ws = [list(cyclic_reduce(w)) for w in ws]
        if drop_single:
            counts: dict[int, int] = {}
            for w in ws:
                for x in w:
                    counts[abs(x)] = counts.get(abs(x), 0) + 1
            singles = {v for v, c in counts.items() if c == 1}
            if singles:
                dropped.extend(t[v - 1] for v in sorted(singles))
                ws = [[x for x in w if abs(x) not in singles] for w in ws]
                changed = True
                continue
        merged = _merge_once(ws, t)
        if merged is not None:
            ws, t, _ = merged
            changed = True
    rws, rt = _relabel(ws, t)
    return ReducedWord(word=rws[0] if rws else (), times=rt, dropped=tuple(dropped),
                       words=rws)
