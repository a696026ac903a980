"""Turn capture files into traces: readers, column rules, import profiles, conversions.

Imports no database code; the importer in the service layer builds on this package.
"""

from logbook.ingest.columns import find_column, trace_from_table
from logbook.ingest.reader import RawTable, read_table

__all__ = ["RawTable", "find_column", "read_table", "trace_from_table"]
