"""Turn capture files into traces: readers, column rules, import profiles, conversions.

Imports no database code; the importer in the service layer builds on this package.
"""

from logbook.ingest.columns import find_column, trace_from_table
from logbook.ingest.convert import AxisInfo, trace_from_profile
from logbook.ingest.metadata import RunFields, merge_run_fields, parse_run_fields
from logbook.ingest.profiles import ImportProfile, load_profile, profile_from_dict
from logbook.ingest.reader import RawTable, read_table

__all__ = [
    "AxisInfo",
    "ImportProfile",
    "RawTable",
    "RunFields",
    "find_column",
    "load_profile",
    "merge_run_fields",
    "parse_run_fields",
    "profile_from_dict",
    "read_table",
    "trace_from_profile",
    "trace_from_table",
]
