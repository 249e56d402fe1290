"""Writers that observe or summarise a run: summary.json, history.csv."""

from .files import atomic_write_text
from .summary import summary_dict, write_history, write_summary

__all__ = ["atomic_write_text", "summary_dict", "write_history", "write_summary"]
