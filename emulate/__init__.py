"""emulate: hear a proposed analog twin-T notch filter before you build it.

The handful of objects a script needs are importable from here; each loads its
stage only when first used, so ``import emulate`` stays cheap and the render path
lean (PEP 562 module ``__getattr__``). Importing it changes no environment
variable; the command line holds BLAS to one thread when it starts
(:mod:`emulate.cli.options`).

Example
-------
>>> import emulate
>>> net = emulate.TwinT.balanced(1000.0, r_ohms=emulate.parse_value("10k"))
>>> round(emulate.measure(net.response).notch_hz)
1000
"""

__version__ = "0.1.0"

#: public name -> the module that owns it, in pipeline order
_PUBLIC = {
    # parts and the analog model
    "parse_value": "emulate.analog.parts",
    "TwinT": "emulate.analog.networks",
    "measure": "emulate.analog.response",
    "NotchMetrics": "emulate.analog.response",
    "design_twin_t": "emulate.analog.design",
    # digital emulation and the block processor
    "design_sections": "emulate.dsp.digital",
    "DigitalNotch": "emulate.dsp.digital",
    "NotchProcessor": "emulate.dsp.processor",
    "processor_for": "emulate.dsp.emulation",
    # files
    "render_file": "emulate.audio.stream",
    # voices
    "find_sibilance": "emulate.voice.sibilance",
    "combine_reports": "emulate.voice.sibilance",
    # presets per speaker
    "Preset": "emulate.work.presets",
    "PresetStore": "emulate.work.presets",
    # errors
    "EmulateError": "emulate.errors",
    "BadValueError": "emulate.errors",
    "EmulateWarning": "emulate.errors",
}

__all__ = ["__version__", *_PUBLIC]


def __getattr__(name):
    if name not in _PUBLIC:
        raise AttributeError(f"module 'emulate' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(_PUBLIC[name]), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(_PUBLIC))
