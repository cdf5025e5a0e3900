"""The workbench's panes: stage chain, measured, noise, op-amp shelf, tolerance spread."""
