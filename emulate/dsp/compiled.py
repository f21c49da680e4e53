"""The render's kernels compiled ahead of time: loaded without numba, or the JIT kernels.

With numba's JIT, a render pays numba's import (about 0.2 s) and the loading of its
cached kernels (about 0.24 s) before the first sample. Compiled ahead of time (numba's
``numba.pycc``), the same kernels are a plain extension module: importing it takes
about a millisecond and does not import numba.

:func:`kernels` is what the processor, the encoder and the render call: the compiled
module when it exists for the current sources, else :mod:`emulate.dsp.kernels` (the JIT
kernels, numba imported then). Both have the same functions with the same arguments;
the compiled ones take exactly the types listed in ``EXPORTS`` (C-contiguous arrays),
so any other call goes to the JIT kernel.

The module is built once, by ``python -m emulate.dsp.compiled`` (about a minute), into
a per-user cache folder: ``$EMULATE_KERNELS_DIR`` if set, else
``$XDG_CACHE_HOME/emulate/kernels`` (``~/.cache/emulate/kernels``), in a subfolder named
by a hash of the kernels' source, this module, the Python ABI, the numpy version and
the CPU, so a changed source or machine never loads an old module. The build writes
into a temporary folder beside its target and renames it into place
(:func:`emulate.files.atomic_path`): concurrent builds are safe (the first one wins),
an interrupted one leaves nothing (numba's own temporary build folder is inside ours).

``numba.pycc`` is pending deprecation since numba 0.57 (a replacement is announced); it
works in numba 0.68. Its exports hold the GIL while they run; the build turns on
numba's ``release_gil`` flag for them, as ``nogil=True`` does for the JIT kernels, so
the render's reader and writer threads keep running beside the kernel.
"""

from __future__ import annotations

import hashlib
import importlib.machinery
import importlib.util
import os
import platform
import sys
import tempfile
import time
import warnings
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from emulate import lifetime

__all__ = ["kernels", "kernels_folder", "compiled_module", "build", "EXPORTS", "MODULE_NAME", "ENV_VAR"]

ENV_VAR = "EMULATE_KERNELS_DIR"
MODULE_NAME = "emulate_compiled_kernels"

_C2 = "f8[:, ::1]"
_FILTER_CODES = ("void({i}[:, ::1], f8, f8[:, ::1], f8[:, :, ::1], b1, f8[::1], f8[:, ::1], i8[::1], i8, "
                 "f8, f8, f8, f8, b1, u8[::1], f8[::1], f8[:, :, ::1], {o}[:, ::1])")
# exported name -> (kernel in emulate.dsp.kernels, numba signature)
EXPORTS = {
    "sos_filter": ("sos_filter", f"void({_C2}, {_C2}, f8[:, :, ::1], {_C2})"),
    "ramp_blend": ("ramp_blend", f"void({_C2}, {_C2}, f8[::1], {_C2})"),
    "delay_line": ("delay_line", f"void({_C2}, {_C2}, i8[::1], {_C2})"),
    **{f"codes_to_float_{t}": ("codes_to_float", f"void({t}[:, ::1], f8, {_C2})") for t in ("i2", "i4")},
    **{f"encode_codes_{t}": ("encode_codes", f"void({_C2}, f8, f8, f8, f8, b1, u8[::1], f8[::1], {t}[:, ::1])")
       for t in ("i2", "i4")},
    **{f"filter_codes_{i}_{o}": ("filter_codes", _FILTER_CODES.format(i=i, o=o))
       for i in ("i2", "i4") for o in ("i2", "i4")},
    "unpack_pcm24": ("unpack_pcm24", "void(u1[::1], i4[:, ::1])"),
    "pack_pcm24": ("pack_pcm24", "void(i4[:, ::1], u1[::1])"),
}
_CODE_TYPES = {np.dtype(np.int16): "i2", np.dtype(np.int32): "i4"}
_HERE = Path(__file__).resolve().parent
_loaded = None  # the kernels namespace of this process, once chosen


def _cpu() -> str:
    """What the compiled code may assume of the processor (it is built for this host's CPU)."""
    try:
        with open("/proc/cpuinfo") as info:
            lines = [line for line in info if line.startswith(("model name", "flags"))]
        return "".join(sorted(set(lines)))
    except OSError:
        return f"{platform.machine()} {platform.processor()}"


def kernels_folder() -> Path:
    """The folder of the compiled module for the current sources, Python, numpy and CPU.

    Example
    -------
    >>> len(kernels_folder().name)
    16
    """
    chosen = os.environ.get(ENV_VAR, "").strip()
    if chosen:
        root = Path(chosen).expanduser()
    else:
        cache = os.environ.get("XDG_CACHE_HOME", "").strip()
        root = (Path(cache) if cache else Path.home() / ".cache") / "emulate" / "kernels"
    digest = hashlib.sha256()
    for source in ("kernels.py", "state_layout.py", "compiled.py"):
        digest.update((_HERE / source).read_bytes())
    digest.update(f"{sys.implementation.cache_tag} {np.__version__} {_cpu()}".encode())
    return root / digest.hexdigest()[:16]


def _module_path(folder: Path) -> Path:
    return folder / (MODULE_NAME + importlib.machinery.EXTENSION_SUFFIXES[0])


def compiled_module():
    """The compiled extension module for the current sources, or None if not built (no numba import)."""
    path = _module_path(kernels_folder())
    if not path.is_file():
        return None
    spec = importlib.util.spec_from_file_location(MODULE_NAME, path)
    module = importlib.util.module_from_spec(spec)
    try:
        spec.loader.exec_module(module)
    except ImportError:  # e.g. built for a library that has gone: the JIT kernels serve
        return None
    return module


def _fits(*pairs) -> bool:
    """Each (array, dtype, ndim): exactly that, C-contiguous and aligned (what the exports take)."""
    return all(isinstance(a, np.ndarray) and a.dtype == dtype and a.ndim == ndim and a.flags.c_contiguous
               and a.flags.aligned for a, dtype, ndim in pairs)


_F8, _I8, _U8 = np.dtype(np.float64), np.dtype(np.int64), np.dtype(np.uint64)
_I4, _BYTE = np.dtype(np.int32), np.dtype(np.uint8)


class _Compiled:
    """The kernels' functions, run by the compiled module where the arguments fit its exports."""

    def __init__(self, module):
        self._module = module

    @staticmethod
    def _jit():
        from emulate.dsp import kernels as jit

        return jit

    def sos_filter(self, sos, x, state, out):
        if _fits((sos, _F8, 2), (x, _F8, 2), (state, _F8, 3), (out, _F8, 2)):
            return self._module.sos_filter(sos, x, state, out)
        return self._jit().sos_filter(sos, x, state, out)

    def ramp_blend(self, a, b, ramp, out):
        if _fits((a, _F8, 2), (b, _F8, 2), (ramp, _F8, 1), (out, _F8, 2)):
            return self._module.ramp_blend(a, b, ramp, out)
        return self._jit().ramp_blend(a, b, ramp, out)

    def delay_line(self, x, buffer, position, out):
        if _fits((x, _F8, 2), (buffer, _F8, 2), (position, _I8, 1), (out, _F8, 2)):
            return self._module.delay_line(x, buffer, position, out)
        return self._jit().delay_line(x, buffer, position, out)

    def codes_to_float(self, codes, scale, out):
        kind = _CODE_TYPES.get(getattr(codes, "dtype", None))
        if kind and _fits((codes, codes.dtype, 2), (out, _F8, 2)):
            return getattr(self._module, f"codes_to_float_{kind}")(codes, float(scale), out)
        return self._jit().codes_to_float(codes, scale, out)

    def encode_codes(self, y, scale, lo, hi, align, dither, rng, tally, codes):
        kind = _CODE_TYPES.get(getattr(codes, "dtype", None))
        if kind and _fits((y, _F8, 2), (rng, _U8, 1), (tally, _F8, 1), (codes, codes.dtype, 2)):
            return getattr(self._module, f"encode_codes_{kind}")(
                y, float(scale), float(lo), float(hi), float(align), bool(dither), rng, tally, codes)
        return self._jit().encode_codes(y, scale, lo, hi, align, dither, rng, tally, codes)

    def filter_codes(self, codes, in_scale, sos, state, blend, ramp, dry_buffer, dry_position, skip,
                     scale, lo, hi, align, dither, rng, tally, scratch, out):
        kind_in = _CODE_TYPES.get(getattr(codes, "dtype", None))
        kind_out = _CODE_TYPES.get(getattr(out, "dtype", None))
        if kind_in and kind_out and _fits(
                (codes, codes.dtype, 2), (sos, _F8, 2), (state, _F8, 3), (ramp, _F8, 1), (dry_buffer, _F8, 2),
                (dry_position, _I8, 1), (rng, _U8, 1), (tally, _F8, 1), (scratch, _F8, 3), (out, out.dtype, 2)):
            return getattr(self._module, f"filter_codes_{kind_in}_{kind_out}")(
                codes, float(in_scale), sos, state, bool(blend), ramp, dry_buffer, dry_position, int(skip),
                float(scale), float(lo), float(hi), float(align), bool(dither), rng, tally, scratch, out)
        return self._jit().filter_codes(codes, in_scale, sos, state, blend, ramp, dry_buffer, dry_position,
                                        skip, scale, lo, hi, align, dither, rng, tally, scratch, out)

    def unpack_pcm24(self, packed, codes):
        if _fits((packed, _BYTE, 1), (codes, _I4, 2)):
            return self._module.unpack_pcm24(packed, codes)
        return self._jit().unpack_pcm24(packed, codes)

    def pack_pcm24(self, codes, packed):
        if _fits((codes, _I4, 2), (packed, _BYTE, 1)):
            return self._module.pack_pcm24(codes, packed)
        return self._jit().pack_pcm24(codes, packed)


def kernels():
    """The kernels this process runs: the compiled module if built, else :mod:`emulate.dsp.kernels`.

    Chosen once per process. Both offer ``sos_filter``, ``ramp_blend``, ``delay_line``,
    ``codes_to_float``, ``encode_codes``, ``filter_codes``, ``unpack_pcm24`` and
    ``pack_pcm24`` with the same arguments and the same results.

    Example
    -------
    >>> hasattr(kernels(), "filter_codes")
    True
    """
    global _loaded
    if _loaded is None:
        module = compiled_module()
        if module is None:
            from emulate.dsp import kernels as jit

            _loaded = jit
        else:
            _loaded = _Compiled(module)
    return _loaded


@contextmanager
def _exports_release_the_gil():
    """numba.pycc compiles its exports with default flags (GIL held); set ``release_gil``."""
    import numba.pycc.compiler as pycc_compiler

    plain = pycc_compiler.Flags

    class NoGilFlags(plain):
        def __init__(self, *args, **kwargs):
            super().__init__(*args, **kwargs)
            self.release_gil = True

    pycc_compiler.Flags = NoGilFlags
    try:
        yield
    finally:
        pycc_compiler.Flags = plain


@contextmanager
def _temporaries_in(folder: Path):
    """``tempfile``'s folder set to ``folder`` (numba's build folder goes inside ours)."""
    before = tempfile.tempdir
    tempfile.tempdir = str(folder)
    try:
        yield
    finally:
        tempfile.tempdir = before


def build() -> Path:
    """Compile the kernels ahead of time into :func:`kernels_folder` (needs numba and a C compiler).

    Returns
    -------
    pathlib.Path
        The module file (already there if another build finished first).

    Raises
    ------
    OSError, numba or compiler errors
        The build failed; nothing is left behind.
    """
    target = kernels_folder()
    if _module_path(target).is_file():
        return _module_path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # numba.pycc's pending-deprecation notice
        from numba.pycc import CC
    from emulate.dsp import kernels as jit
    from emulate.files import atomic_path

    try:
        with atomic_path(target, replace=False) as tmp:
            tmp.mkdir()
            cc = CC(MODULE_NAME)
            cc.output_dir = str(tmp)
            cc.target_cpu = "host"
            for name, (kernel, signature) in EXPORTS.items():
                cc.export(name, signature)(getattr(jit, kernel).py_func)
            with _exports_release_the_gil(), _temporaries_in(tmp):
                cc.compile()
    except FileExistsError:  # another build put it in place first
        pass
    return _module_path(target)


def main() -> int:
    """``python -m emulate.dsp.compiled``: build the module, print where and how long."""
    start = time.perf_counter()
    try:
        path = build()
    except KeyboardInterrupt:
        lifetime.quiet_late_faults()
        print("interrupted: nothing was kept", file=sys.stderr)
        return 130
    except Exception as exc:  # one line, never a traceback
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        print(f"error: the kernels could not be compiled ahead of time ({reason}); renders use numba's "
              "JIT kernels", file=sys.stderr)
        return 1
    print(f"compiled kernels: {path} ({time.perf_counter() - start:.1f} s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
