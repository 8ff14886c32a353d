"""The public API listed in talkthemes.__all__ imports."""

import talkthemes


def test_all_names_import() -> None:
    for name in talkthemes.__all__:
        assert getattr(talkthemes, name) is not None, name


def test_errors_share_one_root() -> None:
    for name in ("ConfigError", "InputError", "NotReadyError", "StoreError", "WorkspaceBusyError"):
        assert issubclass(getattr(talkthemes, name), talkthemes.TalkthemesError)
