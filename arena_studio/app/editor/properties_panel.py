"""Properties panel: typed fields for the selected object (or the scene when none is selected).

Each committed field becomes one undo command; a refused value never reaches the document.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import Any

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QComboBox, QFormLayout, QLabel, QScrollArea, QVBoxLayout, QWidget
from shapely.geometry import Polygon

from arena_studio.app.editor.editor_view import Editor
from arena_studio.app.editor.fields import Field, NumberField, TextField
from arena_studio.core.scene.fields import line_problem
from arena_studio.core.scene.model import Agent, Landmark, Obstacle, Room, Scene
from arena_studio.core.wording import count
from arena_studio.editing import edits as edits
from arena_studio.editing.edits import ObjKey

KIND_TITLE = {"rooms": "Room", "obstacles": "Obstacle", "landmarks": "Landmark", "agents": "Agent"}


class PropertiesPanel(QScrollArea):
    def __init__(self, editor: Editor) -> None:
        super().__init__()
        self.editor = editor
        self.setWidgetResizable(True)
        # Fields shrink to the dock; long read-only values wrap instead of scrolling sideways.
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.fields: dict[str, Field] = {}
        self._key: ObjKey | None = None
        self._shape: tuple[Any, ...] = ()
        self._updaters: list[Callable[[Scene], None]] = []
        editor.selectionChanged.connect(self.rebuild)
        editor.document.changed.connect(self.refresh)
        editor.previewChanged.connect(self.refresh)  # a vertex was picked or dropped
        self.rebuild()

    # -- building ----------------------------------------------------------------------
    def _current(self) -> tuple[ObjKey | None, Any]:
        sel = self.editor.selection()
        if len(sel) != 1:
            return None, None
        return sel[0], edits.find(self.editor.scene, sel[0])

    def _shape_of(self, key: ObjKey | None, obj: Any) -> tuple[Any, ...]:
        if obj is None:
            return (key, len(self.editor.selection()))
        extra: tuple[Any, ...] = ()
        av = self.editor.active_vertex
        if av is not None and av[0] == key:
            extra = ("vertex", av[1])
        if isinstance(obj, Obstacle):
            extra = (*extra, obj.kind)
        elif isinstance(obj, Agent):
            extra = (*extra, obj.start.pose is None)
        return (key, type(obj).__name__, *extra)

    def rebuild(self) -> None:
        key, obj = self._current()
        self._key = key
        self._shape = self._shape_of(key, obj)
        self.fields = {}
        self._updaters = []
        body = QWidget()
        outer = QVBoxLayout(body)
        outer.setContentsMargins(10, 8, 10, 10)
        title = QLabel()
        title.setProperty("role", "heading")
        outer.addWidget(title)
        form = QFormLayout()
        form.setHorizontalSpacing(10)
        form.setVerticalSpacing(6)
        outer.addLayout(form)
        n = len(self.editor.selection())
        if n > 1:
            title.setText(f"{n} objects selected")
            hint = QLabel("Drag or use the arrow keys to move them together (Shift: finer).")
            hint.setWordWrap(True)
            hint.setProperty("role", "muted")
            outer.addWidget(hint)
        elif obj is None:
            title.setText("Scene")
            self._scene_form(form)
        else:
            title.setText(f"{KIND_TITLE[key[0]]} “{obj.id}”")  # type: ignore[index]
            self._object_form(form, key, obj)  # type: ignore[arg-type]
        outer.addStretch(1)
        self.setWidget(body)
        self.refresh()

    def refresh(self) -> None:
        key, obj = self._current()
        if self._shape_of(key, obj) != self._shape:
            self.rebuild()
            return
        for update in self._updaters:
            update(self.editor.scene)

    def _add(
        self,
        form: QFormLayout,
        label: str,
        name: str,
        field: Field,
        getter: Callable[[Scene], Any],
        setter: Callable[[Scene, Any], Scene | None],
        text: str,
    ) -> None:
        field.setObjectName(f"field_{name}")
        self.fields[name] = field
        form.addRow(label, field)

        def commit(value: Any) -> str | None:
            try:
                new = setter(self.editor.scene, value)
            except ValueError as exc:
                return str(exc)
            if new is not None:
                self.editor.apply(new, text)
            return None

        field.apply = commit
        self._updaters.append(lambda scene: field.set_value(getter(scene)))

    def _info(self, form: QFormLayout, label: str, getter: Callable[[Scene], str]) -> None:
        value = QLabel()
        value.setProperty("role", "muted")
        value.setWordWrap(True)
        form.addRow(label, value)
        self._updaters.append(lambda scene: value.setText(getter(scene)))

    # -- forms -------------------------------------------------------------------------
    def _scene_form(self, form: QFormLayout) -> None:
        self._add(
            form,
            "Name",
            "name",
            TextField(_nonempty("name")),
            lambda s: s.name,
            lambda s, v: replace(s, name=v),
            "Rename scene",
        )
        self._add(
            form,
            "Description",
            "description",
            TextField(),
            lambda s: s.description,
            lambda s, v: replace(s, description=v),
            "Edit description",
        )
        self._info(
            form,
            "Contents",
            lambda s: (
                f"{count(len(s.rooms), 'room')}, {count(len(s.obstacles), 'obstacle')}, "
                f"{count(len(s.landmarks), 'landmark')}, {count(len(s.agents), 'agent')}"
            ),
        )
        note = QLabel(
            "Scenes and par times are simulation aids. Real robots near people need a "
            "site survey, a risk assessment and the local safety rules."
        )
        note.setWordWrap(True)
        note.setProperty("role", "muted")
        form.addRow(note)

    def _object_form(self, form: QFormLayout, key: ObjKey, obj: Any) -> None:
        k = key

        def get(scene: Scene) -> Any:
            return edits.find(scene, k)

        def put(scene: Scene, new: Any) -> Scene:
            return edits.replace_object(scene, k, new)

        def rename(scene: Scene, value: str) -> Scene | None:
            old = get(scene)
            if value == old.id:
                return None
            if value in scene.all_ids():
                raise ValueError(f"Another object is already called “{value}”.")
            new = edits.replace_object(scene, k, replace(old, id=value))
            self._key = (k[0], value)
            self._shape = (self._key, *self._shape[1:])
            self.editor._selection = (self._key,)  # keep the renamed object selected
            return new

        self._add(
            form,
            "Id",
            "id",
            TextField(_id_problem),
            lambda s: get(s).id if get(s) else "",
            rename,
            "Rename",
        )
        if isinstance(obj, Room):
            self._polygon_info(form, get, lambda o: o.outline)
        elif isinstance(obj, Obstacle) and obj.circle is not None:

            def centre(o: Obstacle, i: int, v: float) -> Obstacle:
                c = list(o.circle.center)  # type: ignore[union-attr]
                c[i] = v
                return replace(o, circle=replace(o.circle, center=tuple(c)))

            for i, label, name in ((0, "Centre x", "cx"), (1, "Centre y", "cy")):
                self._num(
                    form,
                    label,
                    name,
                    "m",
                    get,
                    put,
                    lambda o, i=i: o.circle.center[i],
                    lambda o, v, i=i: centre(o, i, v),
                )
            self._num(
                form,
                "Radius",
                "radius",
                "m",
                get,
                put,
                lambda o: o.circle.radius,
                lambda o, v: replace(o, circle=replace(o.circle, radius=v)),
                positive=True,
            )
        elif isinstance(obj, Obstacle):
            self._polygon_info(form, get, lambda o: o.outline)
        elif isinstance(obj, Landmark):
            self._add(
                form,
                "Label",
                "label",
                TextField(_nonempty("label")),
                lambda s: get(s).label if get(s) else "",
                lambda s, v: put(s, replace(get(s), label=v)),
                "Edit label",
            )
            self._num(
                form,
                "x",
                "x",
                "m",
                get,
                put,
                lambda o: o.position[0],
                lambda o, v: replace(o, position=(v, o.position[1])),
                reseat=True,
            )
            self._num(
                form,
                "y",
                "y",
                "m",
                get,
                put,
                lambda o: o.position[1],
                lambda o, v: replace(o, position=(o.position[0], v)),
                reseat=True,
            )
            self._attr_num(form, "Reach radius", "reach_radius", "m", get, put)
            self._mount(form, get, put)
        elif isinstance(obj, Agent):
            for label, attr, unit in (
                ("Radius", "radius", "m"),
                ("Top speed", "max_speed", "m/s"),
                ("Top turn rate", "max_turn_rate", "rad/s"),
            ):
                self._attr_num(form, label, attr, unit, get, put)
            if obj.start.pose is not None:

                def pose(o: Agent, i: int, v: float) -> Agent:
                    p = list(o.start.pose)  # type: ignore[arg-type]
                    p[i] = v
                    return replace(o, start=replace(o.start, pose=tuple(p)))

                for i, label, name in ((0, "Start x", "start_x"), (1, "Start y", "start_y")):
                    self._num(
                        form,
                        label,
                        name,
                        "m",
                        get,
                        put,
                        lambda o, i=i: o.start.pose[i],
                        lambda o, v, i=i: pose(o, i, v),
                    )
                self._num(
                    form,
                    "Heading",
                    "heading",
                    "°",
                    get,
                    put,
                    lambda o: math.degrees(o.start.pose[2]),
                    lambda o, v: pose(o, 2, math.radians(v)),
                    digits=1,
                )
            else:
                self._polygon_info(form, get, lambda o: o.start.region, "Start region")
                self._num(
                    form,
                    "Heading",
                    "heading",
                    "°",
                    get,
                    put,
                    lambda o: None if o.start.heading is None else math.degrees(o.start.heading),
                    lambda o, v: replace(
                        o, start=replace(o.start, heading=None if v is None else math.radians(v))
                    ),
                    optional=True,
                    digits=1,
                )

    def _attr_num(
        self,
        form: QFormLayout,
        label: str,
        attr: str,
        unit: str,
        get: Callable[[Scene], Any],
        put: Callable[[Scene, Any], Scene],
    ) -> None:
        """A positive number stored directly in one dataclass field of the object."""
        self._num(
            form,
            label,
            attr,
            unit,
            get,
            put,
            lambda o: getattr(o, attr),
            lambda o, v: replace(o, **{attr: v}),
            positive=True,
        )

    def _num(
        self,
        form: QFormLayout,
        label: str,
        name: str,
        unit: str,
        get: Callable[[Scene], Any],
        put: Callable[[Scene, Any], Scene],
        read: Callable[[Any], Any],
        write: Callable[[Any, Any], Any],
        positive: bool = False,
        optional: bool = False,
        digits: int = 3,
        reseat: bool = False,
    ) -> None:
        def setter(scene: Scene, value: Any) -> Scene:
            new = put(scene, write(get(scene), value))
            if reseat:
                new = edits.reseat_wall_landmarks(new, {get(scene).id})
            return new

        self._add(
            form,
            label,
            name,
            NumberField(unit, positive=positive, optional=optional, digits=digits),
            lambda s: read(get(s)) if get(s) is not None else None,
            setter,
            f"Edit {label.lower()}",
        )

    def _mount(
        self, form: QFormLayout, get: Callable[[Scene], Any], put: Callable[[Scene, Any], Scene]
    ) -> None:
        combo = QComboBox()
        combo.setObjectName("field_mount")
        combo.addItem("On a wall (kept on the wall line)", "wall")
        combo.addItem("Free-standing", "free")
        form.addRow("Mount", combo)

        def changed(_i: int) -> None:
            scene = self.editor.scene
            lm = get(scene)
            mount = combo.currentData()
            if lm is None or mount == lm.mount:
                return
            new = put(scene, replace(lm, mount=mount))
            new = edits.reseat_wall_landmarks(new, {lm.id})
            self.editor.apply(new, "Change mount")

        combo.currentIndexChanged.connect(changed)

        def update(scene: Scene) -> None:
            lm = get(scene)
            if lm is not None:
                combo.blockSignals(True)
                combo.setCurrentIndex(0 if lm.mount == "wall" else 1)
                combo.blockSignals(False)

        self._updaters.append(update)

    def _polygon_info(
        self,
        form: QFormLayout,
        get: Callable[[Scene], Any],
        outline: Callable[[Any], Any],
        what: str = "Outline",
    ) -> None:
        def text(scene: Scene) -> str:
            obj = get(scene)
            pts = outline(obj) if obj is not None else None
            if not pts:
                return ""
            area = Polygon(pts).area if len(pts) >= 3 else 0.0
            return f"{len(pts)} vertices, {area:.2f} m²"

        self._info(form, what, text)
        av = self.editor.active_vertex
        if av is not None and self._key is not None and av[0] == self._key:
            key, index = av

            def vertex(scene: Scene, axis: int) -> float | None:
                pts = outline(get(scene)) if get(scene) is not None else None
                return pts[index][axis] if pts and index < len(pts) else None

            def move(scene: Scene, axis: int, value: float) -> Scene:
                pts = outline(get(scene))
                xy = list(pts[index])
                xy[axis] = value
                return edits.set_vertex(scene, key, index, (xy[0], xy[1]))

            for axis, name in ((0, "x"), (1, "y")):
                self._add(
                    form,
                    f"Vertex {index + 1} {name}",
                    f"vertex_{name}",
                    NumberField("m"),
                    lambda s, a=axis: vertex(s, a),
                    lambda s, v, a=axis: move(s, a, v),
                    "Move vertex",
                )
        hint = QLabel(
            "Drag a handle to move a vertex, double-click an edge to add one, "
            "Delete removes the picked vertex."
        )
        hint.setWordWrap(True)
        hint.setProperty("role", "muted")
        form.addRow(hint)


def _nonempty(what: str) -> Callable[[str], str | None]:
    """Names and labels: not empty, one line of printable text (as the file reader asks)."""

    def problem(text: str) -> str | None:
        if not text.strip():
            return f"The {what} cannot be empty."
        unsafe = line_problem(text)
        return f"The {what} has a {unsafe}." if unsafe else None

    return problem


def _id_problem(text: str) -> str | None:
    if not text.strip():
        return "An id cannot be empty."
    if len(text) > 64:
        return "An id has at most 64 characters."
    unsafe = line_problem(text)
    return f"The id has a {unsafe}." if unsafe else None
