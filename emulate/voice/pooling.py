"""Pooling several takes of one speaker: exact duplicates dropped, one outlying take set aside.

The finders pool their per-take reports the same way: a take that is an exact copy of
one already pooled adds nothing (it would double its own weight), and when three or more
takes agree and one lies far from them, that one is set aside with the reason.

What this module does *not* do: it does not weight or average; each finder pools its
own figures.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["distinct", "outlying"]


def distinct(keys) -> tuple[list[int], list[int]]:
    """Indices of the first occurrence of each key, and of exact repeats.

    Parameters
    ----------
    keys : sequence of hashable
        One key per take (e.g. a tuple of its measured figures).

    Returns
    -------
    (list of int, list of int)
        ``(kept, repeats)``.

    Example
    -------
    >>> distinct([(1, 2), (3,), (1, 2)])
    ([0, 1], [2])
    """
    seen, kept, repeats = set(), [], []
    for index, key in enumerate(keys):
        (repeats if key in seen else kept).append(index)
        seen.add(key)
    return kept, repeats


def outlying(frequencies_hz, limit_octaves: float) -> tuple[int | None, str]:
    """The one take whose frequency lies far from the others', if there is one.

    With three or more takes, each take's distance (octaves) from the median of the
    others is found; the farthest is set aside when its distance exceeds
    ``limit_octaves`` and the others lie within half that of their own median (so
    "far" is clear). With fewer than three takes no take can be told outlying.

    Parameters
    ----------
    frequencies_hz : sequence of float
        One frequency per take, Hz, > 0.
    limit_octaves : float
        How far is too far, octaves.

    Returns
    -------
    (int or None, str)
        The index set aside (None if none) and why.

    Example
    -------
    >>> outlying([6000, 6100, 5900, 3000], 0.25)
    (3, 'its peak 3000 Hz lies 1.00 octave from the other takes (median 6000 Hz)')
    """
    f = np.asarray(frequencies_hz, dtype=np.float64)
    if f.size < 3:
        return None, ""
    others = [np.delete(f, i) for i in range(f.size)]
    distance = np.array([abs(math.log2(f[i] / np.median(o))) for i, o in enumerate(others)])
    worst = int(np.argmax(distance))
    rest = others[worst]
    spread = float(np.max(np.abs(np.log2(rest / np.median(rest)))))
    if distance[worst] <= limit_octaves or spread > limit_octaves / 2.0:
        return None, ""
    return worst, (f"its peak {f[worst]:.0f} Hz lies {distance[worst]:.2f} octave from the other takes "
                   f"(median {np.median(rest):.0f} Hz)")
