"""Service configuration, from environment variables (documented in the README)."""

from __future__ import annotations

import hashlib
import os
import re
from collections.abc import Mapping
from dataclasses import dataclass, fields
from pathlib import Path

from cleaner.options import InvalidInput, Options, read_options

MIB = 1024 * 1024
_VISIBLE_ASCII = re.compile(r"^[\x21-\x7e]+$")
_SHA256_HEX = re.compile(r"^[0-9a-fA-F]{64}$")


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
    api_keys: str | None = None              # comma-separated keys
    api_key_hashes_file: str | None = None   # SHA-256 of each key, hex, one a line

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
        self.api_key_digests()
        return self

    def api_key_digests(self) -> frozenset[bytes]:
        """The SHA-256 digests of the keys that open the service; none: it is open.
        Only digests are kept, so a key is never held in memory past start-up."""
        digests = set()
        for key in (self.api_keys or "").split(","):
            key = key.strip()
            if key:
                if len(key) < 16 or not _VISIBLE_ASCII.match(key):
                    raise ValueError("CLEANER_API_KEYS: each key must be at least 16 visible "
                                     "ASCII characters")
                digests.add(hashlib.sha256(key.encode("ascii")).digest())
        if self.api_key_hashes_file:
            try:
                lines = Path(self.api_key_hashes_file).read_text(encoding="utf-8").splitlines()
            except OSError as exc:
                raise ValueError(f"CLEANER_API_KEY_HASHES_FILE: cannot read it: "
                                 f"{exc.strerror}") from None
            for number, line in enumerate(lines, start=1):
                line = line.split("#", 1)[0].strip()
                if not line:
                    continue
                if not _SHA256_HEX.match(line):
                    raise ValueError(f"CLEANER_API_KEY_HASHES_FILE line {number}: not a SHA-256 "
                                     "digest in hex (64 characters 0-9, a-f)")
                digests.add(bytes.fromhex(line))
        return frozenset(digests)

    def default_options(self) -> Options:
        """Options a request gets for what it does not say (its reference date is taken per request)."""
        try:
            return read_options({"country": self.default_country,
                                 "date_order": self.default_date_order,
                                 "name_order": self.default_name_order})
        except InvalidInput as exc:
            raise ValueError(f"default options: {exc}") from None
