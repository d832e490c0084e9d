"""Reports: console tables, JSON and other exports, all functions of figures."""
