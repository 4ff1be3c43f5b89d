"""The rows of a study: reading a table safely, splitting it into features, target and groups."""

from ._dataset import (
    Dataset,
    attach_columns,
    dataset_from_arrays,
    dataset_from_table,
    file_sha256,
    join_features,
    read_table,
    read_table_file,
)
from ._file import (
    DEFAULT_MAX_COLUMNS,
    DEFAULT_MAX_TABLE_BYTES,
    TableFile,
    excerpt_names,
    open_table,
    parse_table,
    sanitise,
)

__all__ = [
    "Dataset",
    "read_table",
    "read_table_file",
    "dataset_from_table",
    "dataset_from_arrays",
    "file_sha256",
    # opening a table file someone else named
    "TableFile",
    "open_table",
    "parse_table",
    "sanitise",
    "excerpt_names",
    "DEFAULT_MAX_TABLE_BYTES",
    "DEFAULT_MAX_COLUMNS",
    "attach_columns",
    "join_features",
]
