"""The languages of a :class:`talkthemes.Workspace`: each language's calls and its lane.

A workspace themes its main language (``[prepare] lang``) and the undecided calls; every
other language with enough calls is themed in a *lane*, a workspace of its own under
``languages/<code>/`` (docs/languages.md). :meth:`LanguagesMixin.language` opens it, so
every method of :class:`~talkthemes.Workspace` works on one language's themes.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from talkthemes.errors import ConfigError, NotReadyError

from ._base import OnWait, WorkspaceBase
from ._deferred import deferred

if TYPE_CHECKING:
    from talkthemes.languages import lanes as lanes_mod
    from talkthemes.languages.lanes import LanguageState

    from .workspace import Workspace
else:
    lanes_mod = deferred("talkthemes.languages.lanes")

__all__ = ["LanguagesMixin"]

_WHY = {
    "too_few": "{n:,} calls, fewer than [prepare.languages] min_calls = {m:,}: not themed yet",
    "no_chain": "{n:,} calls, but talkthemes ships no preparation chain for it: not themed",
    "undecided": "undecided calls are themed with the main language ({main})",
    "unsettled": "calls not yet given a language: run 'talkthemes prepare'",
}


class LanguagesMixin(WorkspaceBase):
    """Languages and language lanes (see the module notes)."""

    def languages(self) -> list[LanguageState]:
        """Every language of the stored calls, where its calls are themed, most calls first.

        Returns
        -------
        list of LanguageState
            ``code``, ``calls``, ``given`` (by metadata), ``detected``, ``kind`` (``main``,
            ``undecided``, ``lane``, ``too_few``, ``no_chain``, ``unsettled``) and the
            lane's ``folder``.
        """
        with self._dir.store() as store:
            return lanes_mod.language_states(self._dir, store)

    def main_language(self) -> str:
        """This workspace's own language, ``[prepare] lang``."""
        return self.settings().prepare.lang

    def language(self, code: str | None) -> Workspace:
        """The workspace that themes ``code``: this one for its main language (or None),
        else the language's lane.

        Parameters
        ----------
        code : str or None
            A language code or name (``es``, ``es-MX``, ``Spanish``).

        Raises
        ------
        ConfigError
            When ``code`` names no language.
        NotReadyError
            When the language has no lane (too few calls, no chain, no calls), with why.
        """
        from talkthemes.calls.language import normalize_language

        from .workspace import Workspace

        if code is None:
            return self  # type: ignore[return-value]
        wanted = normalize_language(code)
        if wanted is None:
            raise ConfigError(f"--language {code!r}: not a language code (e.g. en, es, de)")
        main = self.main_language()
        if wanted == main:
            return self  # type: ignore[return-value]
        lane = lanes_mod.lane_folder(self._dir, wanted)
        if lane.db_path.exists():
            return Workspace(lane)
        states = {s.code: s for s in self.languages()}
        state = states.get(wanted)
        if state is None:
            known = ", ".join(f"{s.code} ({s.calls:,})" for s in states.values()) or "none"
            raise NotReadyError(
                f"no calls in {wanted!r} in {self.root}; the languages held: {known}"
            )
        why = _WHY.get(state.kind, "its lane is made at the next ingest").format(
            n=state.calls, m=self.settings().prepare.languages.min_calls, main=main
        )
        raise NotReadyError(f"language {wanted!r} has no themes of its own: {why}")

    def languages_themed(self) -> list[tuple[str, Workspace]]:
        """This workspace's main language and each language lane that exists, in order:
        ``[(code, workspace), ...]``."""
        from .workspace import Workspace

        out: list[tuple[str, Workspace]] = [(self.main_language(), self)]  # type: ignore[list-item]
        for state in self.languages():
            lane = lanes_mod.lane_folder(self._dir, state.code)
            if state.kind == "lane" and lane.db_path.exists():
                out.append((state.code, Workspace(lane)))
        return out

    def sync_languages(
        self, *, wait: bool = False, on_wait: OnWait | None = None
    ) -> list[lanes_mod.LaneSync]:
        """Bring every language lane up to date with the stored calls (ingest does this
        itself; calls sent as records reach their lane here, at the next ingest or
        refresh). Takes the writer lock.

        Parameters
        ----------
        wait, on_wait
            See :meth:`hold`.

        Returns
        -------
        list of LaneSync
        """
        from talkthemes.languages.settle import settle_languages

        with self.hold("sync languages", wait=wait, on_wait=on_wait), self._dir.store() as store:
            settle_languages(self._dir, store)
            return lanes_mod.sync_lanes(self._dir, store)
