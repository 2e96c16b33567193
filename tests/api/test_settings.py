"""Where the store is: --db, else $TRIPSIM_DB, else the per-user data folder."""

from __future__ import annotations

import pytest
from tripsim_api.settings import Settings, SettingsError, database_url, read_api_key


def test_the_store_is_found_by_flag_environment_or_user_folder(tmp_path, monkeypatch):
    assert database_url(str(tmp_path / "a.sqlite3")) == f"sqlite:///{tmp_path / 'a.sqlite3'}"
    assert database_url("postgresql+psycopg://u:p@127.0.0.1/db").startswith("postgresql")
    monkeypatch.setenv("TRIPSIM_DB", str(tmp_path / "env.sqlite3"))
    assert database_url(None).endswith("env.sqlite3")
    monkeypatch.delenv("TRIPSIM_DB")
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "data"))
    assert database_url(None) == f"sqlite:///{tmp_path / 'data' / 'tripsim' / 'tripsim.sqlite3'}"
    with pytest.raises(SettingsError, match="is a folder"):
        database_url(str(tmp_path))
    s = Settings(db_url=database_url(str(tmp_path / "b.sqlite3")))
    assert s.inputs_dir() == tmp_path / "b.sqlite3.files"


def test_the_key_comes_from_a_file_or_the_environment(tmp_path, monkeypatch):
    monkeypatch.delenv("TRIPSIM_API_KEY", raising=False)
    monkeypatch.delenv("TRIPSIM_API_KEY_FILE", raising=False)
    assert read_api_key() is None
    key = tmp_path / "key"
    key.write_text("a-long-enough-key-123\nsecond line\n")
    assert read_api_key(key_file=str(key)) == "a-long-enough-key-123"
    with pytest.raises(SettingsError, match="cannot be read"):
        read_api_key(key_file=str(tmp_path / "missing"))
    monkeypatch.setenv("TRIPSIM_API_KEY", "another-long-key-4567")
    assert read_api_key() == "another-long-key-4567"
