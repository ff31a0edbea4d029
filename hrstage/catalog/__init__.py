"""Layer 6: catalogues in and out.

* :func:`read_table` / :func:`write_table` — FITS, VOTable, ECSV, CSV, Parquet; atomic writes;
* :func:`iter_chunks` / :class:`ChunkWriter` — streaming for files larger than memory;
* :func:`detect_profile` — which column plays which role (profiles, names, units, UCDs);
* :func:`extract_roles` — clean float arrays with unit and fill-value checks.

See ``docs/catalog.md``.
"""

from .atomic import atomic_output, check_output_path
from .formats import FORMATS, SUFFIXES, describe_columns, format_of, read_table, write_table
from .profiles import PROFILES, ROLES, ROUTES, ColumnInfo, ColumnMapping, detect_profile, infos_from_table
from .sanity import MISSING, NONPHYSICAL, OK, SENTINEL, extract_roles
from .streaming import DEFAULT_CHUNK_ROWS, ChunkWriter, count_rows, iter_chunks

__all__ = [
    "FORMATS", "SUFFIXES", "PROFILES", "ROLES", "ROUTES", "DEFAULT_CHUNK_ROWS",
    "ColumnInfo", "ColumnMapping", "ChunkWriter",
    "read_table", "write_table", "describe_columns", "format_of", "iter_chunks", "count_rows",
    "detect_profile", "infos_from_table", "extract_roles", "atomic_output", "check_output_path",
    "OK", "MISSING", "SENTINEL", "NONPHYSICAL",
]
