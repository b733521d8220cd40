"""Reports: tables and exports read results only."""

from .export import EXPORT_FORMATS, result_json, write_stage_table
from .tables import result_markdown, stage_table_markdown

__all__ = ["EXPORT_FORMATS", "write_stage_table", "result_json", "result_markdown", "stage_table_markdown"]
