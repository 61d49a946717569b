"""The HTTP service: an app factory in the manner of Flask's own tutorial."""

from __future__ import annotations

import datetime as dt
import functools
from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from flask import Flask

from cleaner.config import Config
from cleaner.engine import load_rules
from cleaner.options import Options
from cleaner.rules import RuleBook
from cleaner.web import access, api, fastlane, fhir, hl7v2, logs, meta, metrics, problems
from cleaner.web.encoding import FastJSONProvider


@dataclass(frozen=True)
class Service:
    rules: RuleBook
    defaults: Options  # checked once at start-up
    max_batch_bytes: int
    max_batch_records: int

    def default_options(self) -> Options:
        """The configured defaults, with today as the reference date of this request."""
        return _on_day(self.defaults, dt.date.today())


@functools.lru_cache(maxsize=4)
def _on_day(defaults: Options, day: dt.date) -> Options:
    # One Options per day, not per request: building it costs more than finding it.
    return replace(defaults, reference_date=day)


def create_app(config: Config | Mapping[str, Any] | None = None) -> Flask:
    """Build the service. `config` overrides the environment's settings."""
    if config is None:
        config = Config.from_env()
    elif isinstance(config, Mapping):
        config = replace(Config.from_env(), **config).checked()
    app = Flask("cleaner")
    app.config["MAX_CONTENT_LENGTH"] = config.max_body_bytes
    app.json = FastJSONProvider(app)
    # Rules are read and checked here, once; a broken table stops start-up.
    service = Service(rules=load_rules(config.rules_dir), defaults=config.default_options(),
                      max_batch_bytes=config.max_batch_bytes,
                      max_batch_records=config.max_batch_records)
    app.extensions["cleaner"] = service
    digests = config.api_key_digests()
    # Inside the envelope, so that its replies are logged and counted like any other.
    app.wsgi_app = fastlane.CleanFastLane(app.wsgi_app, service, config.max_body_bytes, digests)
    logs.configure(app, config.log_level)
    problems.register(app)
    access.register(app, digests)
    app.register_blueprint(api.bp)
    app.register_blueprint(fhir.bp)
    app.register_blueprint(hl7v2.bp)
    app.register_blueprint(meta.bp)
    app.register_blueprint(metrics.bp)
    app.logger.info("rules loaded", extra={"rules_version": service.rules.version,
                                           "codes": len(service.rules.reasons)})
    return app
