"""Clean a Dask DataFrame partition by partition: the same column mapping,
core and cleaned cells as `cleaner clean` on a CSV, so a cluster gives the
same answer as one machine. Needs the optional extra `[dask]`.

    import dask.dataframe as dd
    from cleaner.dask import clean_frame
    cleaned = clean_frame(dd.read_csv("extract.csv", dtype=str, keep_default_na=False),
                          {"reference_date": "2026-12-02"})
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from typing import Any

import dask.dataframe as dd
import pandas as pd

from cleaner import batch
from cleaner.engine import default_rules, load_rules
from cleaner.options import Options, read_options
from cleaner.rules import RuleBook


@functools.cache
def _rules(rules_dir: str | None) -> RuleBook:
    """Each worker process reads the rules once."""
    return load_rules(rules_dir) if rules_dir else default_rules()


def _clean_partition(frame: pd.DataFrame, mapping: dict[int, str], options: Options,
                     rules_dir: str | None) -> pd.DataFrame:
    rules = _rules(rules_dir)
    columns = batch.cleaned_columns(mapping)
    names = [name for name, _, _ in columns] + ["clean_changes", "clean_flags"]
    cleaned = []
    for row in frame.itertuples(index=False, name=None):
        cells = ["" if value is None else str(value) for value in row]
        result = batch.clean_row(cells, batch.csv_line(cells), False, len(cells), mapping,
                                 options, rules)
        cleaned.append(batch.csv_cells(result, columns, rules))
    return pd.concat([frame, pd.DataFrame(cleaned, columns=names, index=frame.index,
                                          dtype=object)], axis=1)


def clean_frame(frame: dd.DataFrame, options: Mapping[str, Any] | Options | None = None,
                mapping: Mapping[str, str] | None = None,
                rules_dir: str | None = None) -> dd.DataFrame:
    """The frame with the cleaned columns, `clean_changes` and `clean_flags`
    after its own. `mapping` (record key -> column) overrides the recognised
    header spellings, as `--map` does."""
    header = [str(column) for column in frame.columns]
    indexes = batch.map_columns(header, mapping or {}, _rules(rules_dir)["batch"])
    chosen = read_options(options)
    names = [name for name, _, _ in batch.cleaned_columns(indexes)] + ["clean_changes",
                                                                       "clean_flags"]
    meta = pd.concat([frame._meta, pd.DataFrame(columns=names, dtype=object)], axis=1)
    return frame.map_partitions(_clean_partition, indexes, chosen, rules_dir, meta=meta)
