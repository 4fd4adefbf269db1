"""The layout editor's widgets: canvas, properties, goals and findings panels, the document
with its undo stack, the background checker and autosave recovery.

Editing decisions (tools, edits, hit tests, snapping) live in the Qt-free
:mod:`arena_studio.editing`; this package only shows them.
"""
