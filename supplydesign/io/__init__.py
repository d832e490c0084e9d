"""Reading and writing design and brief files (the shared file contract)."""

from .designfile import PartsCatalog, load_design, read_catalog_setting
from .tomlwrite import dump_design, format_quantity, readable, save_design

__all__ = ["PartsCatalog", "dump_design", "format_quantity", "load_design",
           "read_catalog_setting", "readable", "save_design"]
