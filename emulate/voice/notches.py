"""A finder's suggested notch, and the twin-T designed for it, ready for render, sweep and presets.

What this module does *not* do: it finds nothing; the finders make the suggestions.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["SuggestedNotch", "designed_circuit"]

#: Below this Q the passive network (Q 0.25) is suggested.
PASSIVE_BELOW_Q = 0.3


@dataclass(frozen=True)
class SuggestedNotch:
    """One notch a finder suggests.

    Attributes
    ----------
    label : str
        What it is for (e.g. ``"hum fundamental"``, ``"hum harmonic 3"``, ``"resonance"``).
    notch_hz : float
        Notch frequency, Hz.
    q : float
        Q of the notch (0.25 = the passive twin-T).
    depth_db : float
        Dip wanted at the notch, dB (> 0).
    mix : float
        Wet share giving that depth over a full null: ``1 - 10**(-depth_db / 20)``.
    """

    label: str
    notch_hz: float
    q: float
    depth_db: float
    mix: float

    @classmethod
    def of(cls, label: str, notch_hz: float, q: float, depth_db: float) -> SuggestedNotch:
        """A notch with its mix worked out from the depth.

        Example
        -------
        >>> round(SuggestedNotch.of("hum", 50.0, 5.0, 20.0).mix, 2)
        0.9
        """
        return cls(label, float(notch_hz), float(q), float(depth_db), float(1.0 - 10.0 ** (-depth_db / 20.0)))


def designed_circuit(notch: SuggestedNotch, *, series: str = "E24") -> dict:
    """Design the twin-T for a suggestion (:func:`emulate.analog.design.design_twin_t`).

    Returns
    -------
    dict
        ``label``, ``notch_hz``, ``q``, ``depth_db``, ``mix`` (the suggestion), ``built_notch_hz``,
        ``parts`` (designator -> value as written), ``circuit`` (the ``[circuit]`` table a
        circuit file or preset holds) and ``options`` (the same as command-line options for
        ``render``, ``response`` and ``preset save``).

    Raises
    ------
    BadValueError
        A notch or Q outside what the designer allows.

    Example
    -------
    >>> d = designed_circuit(SuggestedNotch.of("hum", 50.0, 4.0, 30.0))
    >>> "--bootstrap" in d["options"] and abs(d["built_notch_hz"] / 50 - 1) < 0.03
    True
    """
    from emulate.analog import spec
    from emulate.analog.design import design_twin_t

    q = None if notch.q < PASSIVE_BELOW_Q else min(notch.q, 20.0)
    design = design_twin_t(notch.notch_hz, q=q, series=series)
    table = spec.table_from_network(design.built)
    options = " ".join(f"--{key} {value}" for key, value in table.items()) + f" --mix {notch.mix:.3f}"
    return {"label": notch.label, "notch_hz": notch.notch_hz, "q": notch.q, "depth_db": notch.depth_db,
            "mix": notch.mix, "built_notch_hz": design.built_metrics.notch_hz,
            "parts": design.parts_as_written(), "circuit": table, "options": options}
