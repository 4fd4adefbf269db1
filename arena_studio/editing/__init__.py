"""Qt-free editing logic of the layout editor: tools as state machines, edits, hit testing,
snapping and goal rows.

The Qt canvas (``app.editor``) only translates mouse and key events into :class:`ToolEvent`
values and applies the edits the tools return, so everything here is tested with plain fake
events. Imports ``core`` only.
"""
