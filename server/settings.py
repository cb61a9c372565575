"""Settings from the environment (prefix PRESSCYCLE_), behind one cached getter."""

from functools import lru_cache
from pathlib import Path

from pydantic_settings import BaseSettings, SettingsConfigDict

PROJECT_ROOT = Path(__file__).resolve().parent.parent


class Settings(BaseSettings):
    model_config = SettingsConfigDict(env_prefix="PRESSCYCLE_")

    demo_dir: Path = PROJECT_ROOT / "demo_cases"
    max_body_bytes: int = 2_000_000
    #: The SQLite file of saved scenarios (environment: PRESSCYCLE_DB), relative to the
    #: working folder unless absolute.
    db: Path = Path("data") / "presscycle.sqlite3"


@lru_cache(maxsize=1)
def get_settings() -> Settings:
    return Settings()
