"""Which heteronuclei (19F, 31P) a 1H acquisition decoupled, from what the file records.

A 1H spectrum acquired with 19F or 31P decoupling shows no H-F or H-P splittings; the prediction
must then leave them out. The files say so in several ways, all read here:

* a decoupler channel set to the nucleus (acquisition parameters ``NUC2``/``NUC3``, JCAMP-DX
  ``##$NUC2=``) together with a pulse program whose name says it decouples that nucleus
  (``f19``, ``fdec``, ``{19F}``; ``p31``, ``pdec``, ``{31P}``; or a name with ``dec`` when only
  one X channel is set): a channel set but not used by the pulse program is no decoupling;
* a decoupler label naming the nucleus (JCAMP-DX ``##.DECOUPLER=``, ``##$DECOUPLER=``,
  ``##$DECNUC=``);
* a title or pulse program reading ``1H{19F}`` or ``1H{31P}``.
"""

from __future__ import annotations

import re
from collections.abc import Iterable

from confirm.reading.labels import nucleus_label

__all__ = ["X_DECOUPLABLE", "decoupled_nuclei"]

#: Heteronuclei whose decoupling changes the predicted 1H spectrum.
X_DECOUPLABLE = ("19F", "31P")
_WORDS = {"19F": ("f19", "19f", "fdec", "{19f}", "{f}"), "31P": ("p31", "31p", "pdec", "{31p}", "{p}")}
_BRACED = re.compile(r"1h\s*\{\s*([^}]*)\}", re.IGNORECASE)


def decoupled_nuclei(*, channels: Iterable[str | None] = (), pulse_program: str | None = None,
                     decoupler_labels: Iterable[str | None] = (),
                     titles: Iterable[str | None] = ()) -> tuple[str, ...]:
    """The X nuclei (``"19F"``, ``"31P"``) the acquisition decoupled, in that order.

    Parameters
    ----------
    channels : iterable of str or None, keyword-only
        Nuclei of the extra channels (``NUC2``, ``NUC3``), e.g. ``"<19F>"`` or ``"off"``.
    pulse_program : str or None, keyword-only
        The pulse program's name.
    decoupler_labels : iterable of str or None, keyword-only
        Labels that name the decoupled nucleus outright (``.DECOUPLER``, ``$DECOUPLER``).
    titles : iterable of str or None, keyword-only
        Titles or comments that may read ``1H{19F}``.
    """
    found: set[str] = set()
    program = (pulse_program or "").strip().lower()
    set_channels = {nucleus_label(c) for c in channels if c}
    set_channels &= set(X_DECOUPLABLE)
    for nucleus in set_channels:
        if any(word in program for word in _WORDS[nucleus]) or "dec" in program and len(set_channels) == 1:
            found.add(nucleus)
    for label in decoupler_labels:
        nucleus = nucleus_label(label) if label else None
        if nucleus in X_DECOUPLABLE:
            found.add(nucleus)
    for text in [*titles, pulse_program]:
        for inside in _BRACED.findall(text or ""):
            for part in re.split(r"[,;\s]+", inside):
                nucleus = nucleus_label(part) if part else None
                if nucleus in X_DECOUPLABLE:
                    found.add(nucleus)
    return tuple(n for n in X_DECOUPLABLE if n in found)
