"""The Qt desktop application: windows, canvas, docks, undo commands, settings."""
