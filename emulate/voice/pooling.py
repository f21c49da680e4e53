"""Pooling several takes of one speaker: exact duplicates dropped, one outlying take set aside.

The finders pool their per-take reports the same way (:func:`select_takes`): a take that
is an exact copy of one already pooled adds nothing (it would double its own weight), and
when three or more takes agree and one lies far from them, that one is set aside with the
reason; takes that still disagree are not pooled at all (:func:`disagreement`: two takes cannot
tell which of them is off, and their mean is neither's); :func:`label_takes` names the takes for
those reasons.

What this module does *not* do: it does not weight or average; each finder pools its
own figures.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["disagreement", "distinct", "label_takes", "outlying", "select_takes"]


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


def outlying(frequencies_hz, limit_octaves: float, what: str = "peak") -> tuple[int | None, str]:
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
    what : str, optional
        What the frequency is, for the reason (default "peak").

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
    return worst, (f"its {what} {f[worst]:.4g} Hz lies {distance[worst]:.2f} octave from the other takes "
                   f"(median {np.median(rest):.4g} Hz)")


def label_takes(count: int, labels=None) -> list[str]:
    """One name per take: ``labels`` as text, or "take 1", "take 2", ...

    Raises
    ------
    BadValueError
        When ``labels`` does not hold one name per take.

    Example
    -------
    >>> label_takes(2)
    ['take 1', 'take 2']
    """
    from emulate.errors import BadValueError

    names = [f"take {i + 1}" for i in range(count)] if labels is None else [str(s) for s in labels]
    if len(names) != count:
        raise BadValueError(f"labels: {len(names)} given for {count} takes; give one per take")
    return names


def select_takes(keys, frequencies_hz, labels, limit_octaves: float,
                 what: str = "peak") -> tuple[list[int], list[str]]:
    """The takes to pool, and each one left out with why (repeats first, then one outlier).

    Parameters
    ----------
    keys : sequence of hashable
        One key per take; equal keys are exact repeats (see :func:`distinct`).
    frequencies_hz : sequence of float
        Each take's frequency (NaN where the take found nothing: it cannot be an outlier).
    labels : sequence of str
        A name per take for the reasons.
    limit_octaves : float
        See :func:`outlying`.
    what : str, optional
        What the frequency is, for the reason.

    Returns
    -------
    (list of int, list of str)
        The indices kept, and the reasons (``"LABEL: why"``) for each take left out.

    Example
    -------
    >>> select_takes([1, 2, 1, 3, 4], [50.0, 50.01, 50.0, 49.99, 60.0], list("abcde"), 0.1, "fundamental")
    ([0, 1, 3], ['c: an exact repeat of an earlier take', 'e: its fundamental 60 Hz lies 0.26 octave \
from the other takes (median 50 Hz)'])
    """
    kept, repeats = distinct(keys)
    aside = [f"{labels[i]}: an exact repeat of an earlier take" for i in repeats]
    found = [i for i in kept if np.isfinite(frequencies_hz[i])]
    odd, why = outlying([frequencies_hz[i] for i in found], limit_octaves, what)
    if odd is not None:
        aside.append(f"{labels[found[odd]]}: {why}")
        kept.remove(found[odd])
    return kept, aside


def disagreement(frequencies_hz, limit_octaves: float, what: str = "peaks") -> str:
    """Why takes cannot be pooled: one of their frequencies (NaN aside: takes that found nothing)
    lies more than ``limit_octaves`` from their median; or an empty string.

    Example
    -------
    >>> disagreement([4836.0, 7245.0], 0.25, "/s/ peaks")
    "the takes' /s/ peaks disagree: 4836 to 7245 Hz, over 0.25 octave from their median"
    >>> disagreement([6000.0, 6300.0, float("nan")], 0.25)
    ''
    """
    f = np.asarray(frequencies_hz, dtype=np.float64)
    f = f[np.isfinite(f)]
    if f.size < 2 or np.max(np.abs(np.log2(f / np.median(f)))) <= limit_octaves:
        return ""
    return (f"the takes' {what} disagree: {f.min():.4g} to {f.max():.4g} Hz, over {limit_octaves:.2g} octave "
            f"from their median")
