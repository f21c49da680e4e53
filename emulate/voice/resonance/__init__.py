"""The resonance finder: one narrow, persistent spectral peak (a room mode, a stand or capsule ringing).

A voice's own harmonics and formants are peaks too, and they move; a resonance is fixed
and colours everything the microphone hears, the room's quiet noise between words
included. So the finder reads the resonance where the voice is absent. Its stages, in the
order the data flows, each in the module that does it (whose docstring gives the details and
what was measured; import the modules by name, e.g. ``emulate.voice.resonance.finder``):

1. quiet moments: 20 ms frames quiet in all and in every octave band, at least 1.5 s of them
   (:mod:`.quiet`; the least, :mod:`.finder`);
2. their spectrum on a 1/96-octave grid, 0.2 s Hann frames over the pieces joined end to end,
   with the smearing the joins cause (:mod:`.quiet`);
3. candidates: local maxima standing out of the spectrum's running median (:mod:`.fit`);
4. fit: the analog peaking response as the quiet spectrum sees it, plus a level and a tilt
   (:mod:`.fit`);
5. accepted: gain, Q, misfit and persistence in both halves of the quiet material (:mod:`.fit`);
6. the low range (under 400 Hz) also on 1 s frames gated per grid point (:mod:`.quiet`; which
   reading counts where, :mod:`.finder`);
7. one fit per peak (of those that explain the spans of all the fits on it), the strongest
   reported with a suggested notch (:mod:`.finder`) and the least spread of its centre and Q
   that the material it was read on allows, and how many more takes would pin it within the aim
   (:mod:`.spread`); a peak whose level between the words holds steady is a tone (a whine, a
   mains line), listed apart and not reported as a resonance (:mod:`.steady`);
8. a low ringing peak's centre, Q and gain read from its ring after the words; under 160 Hz a
   peak that does not ring is not reported (:mod:`.ring`).

:mod:`.finder` gives what the whole finder measures on the controlled grid, what was tried and
not kept, and what is left.

What the finder does *not* do: it does not tell a resonance of the room from one of the
microphone; a resonance that only the voice excites (a take whose quiet moments are
electrical noise or digital silence) is not seen; a tone it tells from a resonance only
where the quiet moments hold enough of the peak's band (a narrow low peak's band outlasts the
pieces: there a tone that passes the other tests is read as a resonance).
"""

__all__: list[str] = []  # the modules are imported by name
