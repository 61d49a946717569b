"""Service configuration, from environment variables (documented in the README)."""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass, fields

from cleaner.options import InvalidInput, Options, read_options

MIB = 1024 * 1024


@dataclass(frozen=True)
class Config:
    max_body_bytes: int = MIB
    max_batch_bytes: int = 64 * MIB
    max_batch_records: int = 10_000
    rules_dir: str | None = None
    default_country: str = "US"
    default_date_order: str = "MDY"
    default_name_order: str = "given_first"
    log_level: str = "INFO"

    @classmethod
    def from_env(cls, environ: Mapping[str, str] = os.environ) -> Config:
        given = {}
        for spec in fields(cls):
            name = f"CLEANER_{spec.name.upper()}"
            if environ.get(name):
                raw = environ[name]
                try:
                    given[spec.name] = int(raw) if spec.type == "int" else raw
                except ValueError:
                    raise ValueError(f"{name} must be a whole number") from None
        return cls(**given).checked()

    def checked(self) -> Config:
        if self.max_body_bytes < 1024 or self.max_batch_bytes < 1024:
            raise ValueError("CLEANER_MAX_BODY_BYTES and CLEANER_MAX_BATCH_BYTES must be at least 1024")
        if self.max_batch_records < 1:
            raise ValueError("CLEANER_MAX_BATCH_RECORDS must be at least 1")
        if self.log_level.upper() not in ("DEBUG", "INFO", "WARNING", "ERROR"):
            raise ValueError("CLEANER_LOG_LEVEL must be DEBUG, INFO, WARNING or ERROR")
        self.default_options()
        return self

    def default_options(self) -> Options:
        """Options a request gets for what it does not say (its reference date is taken per request)."""
        try:
            return read_options({"country": self.default_country,
                                 "date_order": self.default_date_order,
                                 "name_order": self.default_name_order})
        except InvalidInput as exc:
            raise ValueError(f"default options: {exc}") from None
