"""Application settings, read once from the environment (prefix TALLYROOM_)."""

from functools import lru_cache
from pathlib import Path

from pydantic import Field, field_validator
from pydantic_settings import BaseSettings, SettingsConfigDict

PROJECT_ROOT = Path(__file__).resolve().parent.parent
DEFAULT_DATABASE_URL = f"sqlite:///{PROJECT_ROOT / 'data' / 'tallyroom.db'}"


class Settings(BaseSettings):
    """Where the data lives and how the server presents itself."""

    model_config = SettingsConfigDict(env_prefix="TALLYROOM_")

    database_url: str = DEFAULT_DATABASE_URL
    host: str = "127.0.0.1"
    port: int = 8000
    room_poll_seconds: float = 0.5
    # Study-file limits (README "Importing a study file"): a node's worksheet shows every one of
    # its scenarios at once (measured: 500 demo-like scenarios make a 20 MB page in ~2 s and
    # ~100 MB of server memory; 2,000 made 82 MB, 6 s, ~360 MB), so a node is bounded; the
    # whole study too, at the largest study `make bench` measures (50,000 scenarios).
    max_import_scenarios: int = 50_000
    max_import_scenarios_per_node: int = 500
    # The largest upload or `tallyroom import` file, in bytes (README "Importing a study file";
    # study_import.LARGEST_STUDY_FILE_BYTES says how it follows from max_import_scenarios).
    max_import_bytes: int = Field(default=512 * 2**20, gt=0)
    # Serve the meeting-room network: sign-in with the passphrase or the day's join code.
    lan: bool = False
    # Other names this server answers to (a DNS name for the LAN address; the test client).
    extra_hosts: list[str] = []
    # Rolling copies of an SQLite database kept in backups/ beside it (0 turns them off) and
    # how often the server looks for edits to copy.
    backup_keep: int = Field(default=20, ge=0)
    backup_interval_seconds: float = Field(default=300.0, gt=0)
    # How often the server copies an SQLite write-ahead log into the database file, off the
    # request path (app/lifecycle.py WalCheckpoints).
    wal_checkpoint_seconds: float = Field(default=1.0, gt=0)
    # How long a request waits for another write to an SQLite database to finish (one writer
    # at a time: a large import holds it for seconds) before it is answered "busy" (503).
    sqlite_busy_seconds: float = Field(default=5.0, gt=0, le=600)

    @field_validator("database_url")
    @classmethod
    def supported_database(cls, url: str) -> str:
        """Refuse database URLs the app has not been built for."""
        if not url.startswith(("sqlite", "postgresql")):
            raise ValueError("TALLYROOM_DATABASE_URL must be an sqlite:// or postgresql:// URL")
        return url

    @property
    def serves_network(self) -> bool:
        """True when other machines can reach the server: LAN mode or a non-loopback bind."""
        return self.lan or self.host not in LOOPBACK_HOSTS


LOOPBACK_HOSTS = frozenset({"127.0.0.1", "localhost", "::1"})


@lru_cache
def get_settings() -> Settings:
    """The one settings object; tests clear the cache to change it."""
    return Settings()
