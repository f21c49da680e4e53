"""A parametrised check split between the default run and the slow part; invented takes made once.

The default run keeps a few representative parameter sets (every branch: each rate family, each
background, a control); the rest run with ``python -m pytest -m slow`` (CI runs both), so nothing
is left unchecked and the default run stays within its CPU budget (issue 8: under 60 s).
"""

from __future__ import annotations

from functools import lru_cache

import pytest

__all__ = ["shared_voice_take", "slow_except"]


def slow_except(argvalues, keep, *, ids=None, one_name=False):
    """``argvalues`` for ``pytest.mark.parametrize``, all but those at the indices ``keep`` marked slow.

    ``argvalues`` are what parametrize would take: tuples for several argument names, single
    values with ``one_name=True``; ``ids`` as parametrize takes them (a list or a function).
    """
    argvalues = list(argvalues)
    keep = {index % len(argvalues) for index in keep}
    params = []
    for index, value in enumerate(argvalues):
        values = (value,) if one_name or not isinstance(value, tuple) else value
        name = ids(value) if callable(ids) else (ids[index] if ids is not None else None)
        params.append(pytest.param(*values, id=name, marks=() if index in keep else pytest.mark.slow))
    return params


@lru_cache(maxsize=None)
def shared_voice_take(fs, seconds, **options):
    """``emulate.voice.synth.voice_like_take(fs, seconds, **options)``, made once a session, read-only.

    The same arguments (seed included) give the same samples, so one take serves every test
    that asks for it; it is read-only so that no test can change another's (a test that needs
    to change it works on a copy or on a new array, e.g. ``take * gain``).
    """
    from emulate.voice.synth import voice_like_take

    take = voice_like_take(fs, seconds, **options)
    take.setflags(write=False)
    return take
