"""Install, enable, disable, uninstall the built zip 20 times in one process: nothing is left behind.

This module installs and uninstalls, so it does not use conftest's install
(conftest installs or enables the add-on when the session starts and enables
it before each test; the cycles below begin by taking that install away and
end by putting it back, installed and enabled, for the next module). After the
cycles no class, scene property, app handler, timer, draw handler or key map
item of leapwright's may remain, and a fresh install must work.

Timers and draw handlers cannot be listed through the API, so every call of
``bpy.app.timers.register`` and ``Space*.draw_handler_add`` made while the
add-on is enabled is recorded (wrapped for the duration of the cycles) and each
must have been undone by the time it is uninstalled.
"""

import os
import sys

import addon_utils
import bpy
import pytest

import conftest

CYCLES = 20
PKG = "leapwright"
MODULE = conftest.MODULE


def _zip():
    return os.environ["LW_TEST_ZIP"]


def _installed():
    return os.path.isdir(os.path.join(conftest.repo_dir(), PKG))


def _repo_index():
    for i, repo in enumerate(bpy.context.preferences.extensions.repos):
        if repo.module == "user_default":
            return i
    raise RuntimeError("no user_default repository")


def install():
    res = bpy.ops.extensions.package_install_files(filepath=_zip(), repo="user_default", enable_on_install=False)
    assert res == {"FINISHED"}, res
    assert _installed()


def uninstall():
    res = bpy.ops.extensions.package_uninstall(repo_index=_repo_index(), pkg_id=PKG)
    assert res == {"FINISHED"}, res
    assert not _installed()


def enable():
    addon_utils.enable(MODULE, default_set=True, handle_error=_raise)
    assert conftest.enabled()


def disable():
    addon_utils.disable(MODULE, default_set=True, handle_error=_raise)
    assert not conftest.enabled()


def _raise(exc):
    raise exc


def _ours(obj):
    text = " ".join(str(x) for x in (getattr(obj, "__module__", ""), getattr(obj, "__qualname__", ""),
                                     getattr(obj, "bl_idname", ""), getattr(obj, "__name__", "")))
    return "leapwright" in text.lower()


def leftovers():
    """Everything of leapwright's still registered, as readable strings."""
    found = []
    for name in dir(bpy.types):
        cls = getattr(bpy.types, name, None)
        idname = str(getattr(cls, "bl_idname", ""))
        if "leapwright" in (name + " " + idname).lower():
            found.append(f"class {name} ({idname})")
    for struct in (bpy.types.Scene, bpy.types.Object, bpy.types.WindowManager, bpy.types.PoseBone,
                   bpy.types.Armature, bpy.types.Action):
        for prop in struct.bl_rna.properties:
            if prop.identifier.lower().startswith(("leapwright", "lw_")):
                found.append(f"property {struct.__name__}.{prop.identifier}")
    for op_name in dir(bpy.ops):
        if op_name.lower() == "leapwright" and [n for n in dir(bpy.ops.leapwright) if not n.startswith("_")]:
            found.append("operators bpy.ops.leapwright." + ", ".join(dir(bpy.ops.leapwright)))
    for name in dir(bpy.app.handlers):
        handlers = getattr(bpy.app.handlers, name)
        if isinstance(handlers, list):
            found += [f"handler {name}: {fn!r}" for fn in handlers if _ours(fn)]
    kc = bpy.context.window_manager.keyconfigs.addon
    if kc is not None:
        for km in kc.keymaps:
            found += [f"keymap item {km.name}: {kmi.idname}" for kmi in km.keymap_items
                      if "leapwright" in kmi.idname.lower()]
    return found


class _Recorder:
    """Wraps timer and draw-handler registration to see what the add-on adds and removes."""

    SPACES = ("SpaceView3D", "SpaceGraphEditor", "SpaceDopeSheetEditor", "SpaceNLA", "SpaceProperties",
              "SpaceImageEditor", "SpaceNodeEditor", "SpaceSequenceEditor", "SpaceTextEditor")

    def __init__(self):
        self.timers, self.draw_added, self.draw_removed = [], [], []
        self._saved = []

    def __enter__(self):
        timers = bpy.app.timers
        orig_register = timers.register

        def register(fn, *args, **kwargs):
            self.timers.append(fn)
            return orig_register(fn, *args, **kwargs)

        self._saved.append((timers, "register", orig_register))
        timers.register = register
        for name in self.SPACES:
            space = getattr(bpy.types, name, None)
            if space is None or "draw_handler_add" not in dir(space):
                continue
            add, remove = space.draw_handler_add, space.draw_handler_remove

            def add_wrapped(*args, _add=add, **kwargs):
                handle = _add(*args, **kwargs)
                self.draw_added.append(handle)
                return handle

            def remove_wrapped(handle, *args, _remove=remove, **kwargs):
                self.draw_removed.append(handle)
                return _remove(handle, *args, **kwargs)

            self._saved += [(space, "draw_handler_add", add), (space, "draw_handler_remove", remove)]
            space.draw_handler_add, space.draw_handler_remove = add_wrapped, remove_wrapped
        return self

    def __exit__(self, *exc):
        for owner, attr, value in reversed(self._saved):
            setattr(owner, attr, value)

    def still_registered(self):
        timers = [fn for fn in self.timers if bpy.app.timers.is_registered(fn)]
        draws = [h for h in self.draw_added if h not in self.draw_removed]
        return timers, draws


def _switch_overlays_on():
    """Turn on every viewport drawing the add-on offers (so disabling must remove it); how many."""
    n = 0
    scene = bpy.context.scene
    for prop in bpy.types.Scene.bl_rna.properties:
        if prop.identifier.startswith("leapwright"):
            group = getattr(scene, prop.identifier)
            if group is not None and "show_overlay" in group.bl_rna.properties:
                group.show_overlay = True
                n += 1
    return n


def _operator_runs():
    """The reinstalled add-on plans and writes a jump on a fresh rig."""
    from rig_builder import build_rig, configure
    bpy.ops.wm.read_factory_settings(use_empty=True)
    if not conftest.enabled():
        enable()
    rig = build_rig()
    configure(rig, height=0.4)
    bpy.context.view_layer.objects.active = rig
    assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
    assert any(m.name.startswith("lw:") for m in bpy.context.scene.timeline_markers)
    assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}


@pytest.fixture
def no_install():
    """Start with the add-on neither enabled nor installed."""
    if conftest.enabled():
        disable()
    if _installed():
        uninstall()
    assert leftovers() == []
    yield


def test_twenty_install_cycles_leave_nothing_behind(no_install):
    overlays = 0
    with _Recorder() as rec:
        for n in range(CYCLES):
            install()
            assert not conftest.enabled()
            enable()
            assert "leapwright_plan" in bpy.types.Scene.bl_rna.properties, n
            assert "write_plan" in dir(bpy.ops.leapwright), n
            assert leftovers(), "the leftover check sees nothing even while the add-on is enabled"
            overlays += _switch_overlays_on()
            disable()
            assert leftovers() == [], (n, "after disable")
            uninstall()
            assert leftovers() == [], (n, "after uninstall")
        timers, draws = rec.still_registered()
    if overlays:  # the draw-handler record can fail: the overlay added one each cycle
        assert len(rec.draw_added) >= overlays, (len(rec.draw_added), overlays)
    assert timers == [], f"timers left registered: {timers}"
    assert draws == [], f"draw handlers never removed: {draws}"
    assert not [m for m in sys.modules if m == MODULE and getattr(sys.modules[m], "__addon_enabled__", False)]


def test_reinstall_after_the_cycles_works_and_the_operator_runs(no_install):
    for _ in range(2):
        install()
        enable()
        disable()
        uninstall()
    install()
    enable()
    _operator_runs()
    assert conftest.enabled() and _installed()  # left as the next module expects
