"""The Qt workbench window."""
