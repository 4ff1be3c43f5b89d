"""The rows of a study: reading a table, splitting it into features, target and groups."""

from ._dataset import (
    Dataset,
    dataset_from_arrays,
    dataset_from_table,
    file_sha256,
    read_table,
)

__all__ = [
    "Dataset",
    "read_table",
    "dataset_from_table",
    "dataset_from_arrays",
    "file_sha256",
]
