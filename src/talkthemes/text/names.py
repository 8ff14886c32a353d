"""Word lists about people's names, shared by the preparation chain and the screens.

:func:`first_names` is a first-name list from a registry package; :data:`ROLE_WORDS` are the
words of speaker labels that name a role, not a person; :data:`MONTHS_DAYS` are English words
that are written with a capital but never name a person; :data:`REPLY_WORDS` are replies
that follow a cue ("Thanks, great.") but are never names. Both the chain's names step
(:mod:`talkthemes.prepare.names`) and the on-screen masking (:mod:`talkthemes.privacy`) read
them from here.
"""

from __future__ import annotations

import functools
import importlib
import pkgutil

__all__ = ["MONTHS_DAYS", "REPLY_WORDS", "ROLE_WORDS", "first_names"]

#: English month and day names (lower-case): capitalised, but never a person's name.
MONTHS_DAYS = frozenset(
    [
        "january",
        "february",
        "march",
        "april",
        "may",
        "june",
        "july",
        "august",
        "september",
        "october",
        "november",
        "december",
        "monday",
        "tuesday",
        "wednesday",
        "thursday",
        "friday",
        "saturday",
        "sunday",
    ]
)

#: Words of speaker labels (lower-case) that name a role or a title, not a person.
ROLE_WORDS = frozenset(
    [
        "agent",
        "customer",
        "caller",
        "client",
        "speaker",
        "rep",
        "representative",
        "advisor",
        "adviser",
        "operator",
        "interviewer",
        "interviewee",
        "host",
        "guest",
        "user",
        "support",
        "staff",
        "unknown",
        "system",
        "bot",
        "ivr",
        "mr",
        "mrs",
        "ms",
        "miss",
        "dr",
        "sir",
        "madam",
    ]
)

#: Replies (lower-case) that follow a word which cues a name ("Thanks, great.", "It's fine.",
#: "Hi, sorry …") but are never a person's name.
REPLY_WORDS = frozenset(
    [
        "sorry",
        "fine",
        "okay",
        "ok",
        "great",
        "right",
        "here",
        "there",
        "done",
        "true",
        "yes",
        "yeah",
        "no",
        "nope",
        "sure",
        "well",
        "good",
        "perfect",
        "lovely",
        "brilliant",
        "thanks",
        "cheers",
        "bye",
        "hello",
        "hi",
        "hey",
        "mm",
        "hmm",
        "uh",
        "um",
        "oh",
        "ah",
    ]
)


@functools.cache
def first_names() -> frozenset[str]:
    """First names in Latin script from the ``faker`` package's person providers (MIT).

    The union, over every locale, of the providers' ``first_names``,
    ``first_names_male`` and ``first_names_female``. Read once per process. Only names of
    three letters or more, written with letters only, are kept, as written ("Priya").
    """
    # Deferred on purpose: faker's person providers are some eighty modules, read only
    # when names are looked for the first time in a process.
    import faker.providers.person as people

    names: set[str] = set()
    for info in pkgutil.iter_modules(people.__path__):
        try:
            module = importlib.import_module(f"{people.__name__}.{info.name}")
        except ImportError:  # pragma: no cover - a provider needing an optional package
            continue
        provider = getattr(module, "Provider", None)
        for attr in ("first_names", "first_names_male", "first_names_female"):
            value = None
            for cls in getattr(provider, "__mro__", ()):
                if attr in vars(cls):
                    value = vars(cls)[attr]
                    break
            if isinstance(value, (dict, list, tuple)):
                names.update(n for n in value if isinstance(n, str))
    return frozenset(
        n
        for n in names
        if len(n) >= 3 and n.isalpha() and n[0].isupper() and all(ord(c) < 0x250 for c in n)
    )
