"""Fixtures of the view tests: the in-memory version and its metadata (see ``data.py``)."""

from __future__ import annotations

import pytest
from tests.view.data import META, SHARES, make_version

from talkthemes.versions.load import Version
from talkthemes.view.metadata import FieldInfo, MetaTable, metadata_table


@pytest.fixture
def version() -> Version:
    return make_version(SHARES, labels=["Bills", "", ""])


@pytest.fixture
def meta() -> MetaTable:
    table = metadata_table([f"t{i}" for i in range(6)], META)
    table.fields["ref"] = FieldInfo("ref", "text")  # few values, but treat as free text
    return table
