"""The workbench's building blocks: value fields, target strip, candidate columns, plots."""
