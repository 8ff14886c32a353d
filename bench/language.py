"""Benchmark of language detection on short call-like texts (not a test).

    python bench/language.py                 # accuracy by length and speed, medians of 3 runs
    python bench/language.py --repeat 5 --calls 400

Labelled reference (an outside one, not invented): the example sentences spaCy ships with
each language (``spacy.lang.<code>.examples.sentences``, spaCy 3.8). For the seven languages
we ship a chain for (en, es, de, fr, it, nl, pt) each language's sentences are joined in
order and cut into texts of N words starting at each sentence (so the 3- and 6-word texts
are truncations of one sentence, the 12- and 25-word ones run into the next sentences);
"full" is each sentence as it is. Other languages' sentences (Latin script, where a
confusion with one of the seven is likely) give the *capture* rate: the share of their
12-word and full texts called one of the seven (a Polish text must not come out as Dutch).

Candidates:

- ``py3langid``: naive Bayes over byte n-grams, 142 languages (``norm_probs`` on);
  ``py3-639-1``: the same restricted to its languages with an ISO 639-1 code (114);
- ``lingua``: lingua-language-detector, all 75 languages, high-accuracy mode with the models
  preloaded; ``lingua-low``: the same in its low-accuracy mode;
- ``talkthemes``: :func:`talkthemes.calls.language.detect_language` with its defaults (the
  text given as one turn; an ``und`` answer counts as wrong).

Speed is measured on invented demo calls (:func:`talkthemes.demo.iter_demo_calls`) cut to
about 300 words (their first turns up to 300 words): the detector on the whole call's text,
on its first 50 words, and on single 6-word turns. Figures are medians of ``--repeat`` runs;
model loading is timed once, apart.
"""

from __future__ import annotations

import argparse
import importlib
import statistics
import time
from collections.abc import Callable, Sequence

SEVEN = ("en", "es", "de", "fr", "it", "nl", "pt")
OTHERS = ("ca", "cs", "da", "fi", "hr", "hu", "id", "lt", "nb", "pl", "ro", "sk", "sl", "sq", "sv")
LENGTHS = (3, 6, 12, 25)


def reference_sentences(code: str) -> list[str]:
    """spaCy's example sentences for ``code`` (``spacy.lang.<code>.examples``)."""
    return list(importlib.import_module(f"spacy.lang.{code}.examples").sentences)


def windows(sentences: Sequence[str], n: int) -> list[str]:
    """Texts of ``n`` words, one starting at each sentence, running on (cyclically)."""
    words: list[str] = []
    starts = []
    for sentence in sentences:
        starts.append(len(words))
        words.extend(sentence.split())
    doubled = words * (1 + n // max(len(words), 1) + 1)
    return [" ".join(doubled[s : s + n]) for s in starts]


def labelled_set() -> dict[str, dict[str, list[str]]]:
    """``{bucket: {code: texts}}`` for the buckets 3, 6, 12, 25 words and ``full``."""
    out: dict[str, dict[str, list[str]]] = {str(n): {} for n in LENGTHS}
    out["full"] = {}
    for code in SEVEN + OTHERS:
        sentences = reference_sentences(code)
        out["full"][code] = sentences
        for n in LENGTHS:
            out[str(n)][code] = windows(sentences, n)
    return out


# --- the candidates: each is a loader returning ``text -> ISO 639-1 code`` ----------------


def load_py3langid() -> Callable[[str], str]:
    from py3langid.langid import MODEL_FILE, LanguageIdentifier

    ident = LanguageIdentifier.from_model_file(MODEL_FILE, norm_probs=True)

    def detect(text: str) -> str:
        code = ident.classify(text)[0]
        return "nb" if code == "no" else code

    return detect


def _load_lingua(low: bool) -> Callable[[str], str]:
    from lingua import LanguageDetectorBuilder

    builder = LanguageDetectorBuilder.from_all_languages()
    if low:
        builder = builder.with_low_accuracy_mode()
    detector = builder.with_preloaded_language_models().build()

    def detect(text: str) -> str:
        language = detector.detect_language_of(text)
        return "und" if language is None else language.iso_code_639_1.name.lower()

    return detect


def load_lingua() -> Callable[[str], str]:
    return _load_lingua(low=False)


def load_lingua_low() -> Callable[[str], str]:
    return _load_lingua(low=True)


def load_talkthemes() -> Callable[[str], str]:
    from talkthemes.calls.language import detect_language

    detect_language(["this warms the model up"])
    return lambda text: detect_language([text]).code


def load_py3langid_639_1() -> Callable[[str], str]:
    from talkthemes.calls.language import _identifier

    ident = _identifier()  # restricted to the languages with an ISO 639-1 code

    def detect(text: str) -> str:
        code = ident.classify(text)[0]
        return "nb" if code == "no" else code

    return detect


CANDIDATES: dict[str, Callable[[], Callable[[str], str]]] = {
    "py3langid": load_py3langid,
    "py3-639-1": load_py3langid_639_1,
    "lingua": load_lingua,
    "lingua-low": load_lingua_low,
    "talkthemes": load_talkthemes,
}


def accuracy(
    detect: Callable[[str], str], data: dict[str, dict[str, list[str]]]
) -> tuple[dict[str, float], dict[str, float]]:
    """Accuracy and share of ``und`` per bucket over the seven; the others' capture rate."""
    result: dict[str, float] = {}
    undecided: dict[str, float] = {}
    for bucket, by_code in data.items():
        hits = und = total = 0
        for code in SEVEN:
            for text in by_code[code]:
                found = detect(text)
                hits += found == code
                und += found == "und"
                total += 1
        result[bucket] = hits / total
        undecided[bucket] = und / total
    captured = total = 0
    for bucket in ("12", "full"):
        for code in OTHERS:
            for text in data[bucket][code]:
                captured += detect(text) in SEVEN
                total += 1
    result["captured"] = captured / total
    return result, undecided


def demo_calls(n: int, words: int = 300) -> list[list[str]]:
    """``n`` invented demo calls, each its first turns up to about ``words`` words."""
    from talkthemes.demo.calls import iter_demo_calls

    calls = []
    for call in iter_demo_calls(n, 11):
        turns, count = [], 0
        for turn in call.turns:
            if count >= words:
                break
            turns.append(turn.text)
            count += len(turn.text.split())
        calls.append(turns)
    return calls


def _rate(fn: Callable[[], int], repeat: int) -> float:
    rates = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        n = fn()
        rates.append(n / (time.perf_counter() - t0))
    return statistics.median(rates)


def speed(name: str, detect: Callable[[str], str], calls: list[list[str]], repeat: int) -> dict:
    """Calls/s on whole calls, their first 50 words, and single 6-word turns."""
    joined = [" ".join(turns) for turns in calls]
    heads = [" ".join(text.split()[:50]) for text in joined]
    shorts = [" ".join(turn.split()[:6]) for turns in calls for turn in turns[1:4]]

    def run(texts: list[str]) -> Callable[[], int]:
        def go() -> int:
            for text in texts:
                detect(text)
            return len(texts)

        return go

    out = {"short turn": _rate(run(shorts), repeat), "first 50 words": _rate(run(heads), repeat)}
    if name == "talkthemes":  # the module decides on the turns itself
        from talkthemes.calls.language import detect_languages

        def whole() -> int:
            detect_languages(calls)
            return len(calls)

        out["whole call"] = _rate(whole, repeat)
        from talkthemes.calls.language import WINDOW_WORDS

        first_two = [g.words <= 2 * WINDOW_WORDS for g in detect_languages(calls)]
        out["first two"] = sum(first_two) / len(calls)
    else:
        out["whole call"] = _rate(run(joined), repeat)
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--repeat", type=int, default=3, help="speed runs (medians)")
    parser.add_argument("--calls", type=int, default=200, help="demo calls timed")
    parser.add_argument("--only", nargs="*", default=list(CANDIDATES), choices=list(CANDIDATES))
    args = parser.parse_args()

    data = labelled_set()
    calls = demo_calls(args.calls)
    call_words = statistics.median(sum(len(t.split()) for t in c) for c in calls)
    sizes = {bucket: sum(len(by_code[c]) for c in SEVEN) for bucket, by_code in data.items()}
    print("reference: spaCy 3.8 example sentences (spacy.lang.<code>.examples.sentences)")
    print(f"texts per bucket over {', '.join(SEVEN)}: {sizes}")
    print(f"other languages (capture rate): {', '.join(OTHERS)}")
    print(f"speed: {len(calls)} demo calls, median {call_words:.0f} words, {args.repeat} runs\n")
    buckets = [*data, "captured"]
    head = f"{'detector':<11} {'load s':>6} " + " ".join(f"{b:>8}" for b in buckets)
    head += f" {'call/s':>8} {'50w/s':>8} {'turn/s':>8}"
    print(head)
    for name in args.only:
        t0 = time.perf_counter()
        detect = CANDIDATES[name]()
        load = time.perf_counter() - t0
        acc, und = accuracy(detect, data)
        fast = speed(name, detect, calls, args.repeat)
        row = f"{name:<11} {load:>6.2f} " + " ".join(f"{acc[b]:>8.3f}" for b in buckets)
        row += f" {fast['whole call']:>8.0f} {fast['first 50 words']:>8.0f}"
        row += f" {fast['short turn']:>8.0f}"
        print(row, flush=True)
        if "first two" in fast:
            print(f"  demo calls decided on their first two windows: {fast['first two']:.1%}")
        if any(und.values()):
            print(f"{'  und':<18} " + " ".join(f"{und[b]:>8.3f}" for b in data), flush=True)
    print("\naccuracy: share of texts of the seven given their own code, per bucket (words);")
    print("und: share of them left undecided (counted wrong above);")
    print("captured: share of the other languages' 12-word and full texts called one of the seven;")
    print("call/s on whole calls (talkthemes: detect_languages on the turns), 50w/s on their")
    print("first 50 words, turn/s on single 6-word turns; load s: loading once, apart (lingua-low")
    print("shares the models lingua loaded, talkthemes the model py3-639-1 loaded)")


if __name__ == "__main__":
    main()
