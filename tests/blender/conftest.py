"""Blender in-process fixtures: install (or enable) the built zip, a clean file
per test, and an exit that cannot crash.

Blender's state is one per process; run.py starts one pytest process per test
module. A process that exits with add-on classes registered segfaults (4.2) or
hangs (4.5), so the add-on is disabled after the last test and the process
leaves through ``os._exit`` with pytest's own exit status.
"""

import os
import sys

import pytest

import bpy  # noqa: E402  (Blender as a module, from the package registry)
import addon_utils  # noqa: E402

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

MODULE = "bl_ext.user_default.leapwright"
STATE = {"installed_now": False, "exit": 1}


def repo_dir():
    """Directory of the 'user_default' extension repository."""
    for repo in bpy.context.preferences.extensions.repos:
        if repo.module == "user_default":
            return repo.directory
    raise RuntimeError("no user_default extension repository")


def enabled():
    return MODULE in bpy.context.preferences.addons


def install_or_enable():
    """Install the zip like a user (first process) or enable the installed copy."""
    installed = os.path.isdir(os.path.join(repo_dir(), "leapwright"))
    if not installed:
        zip_path = os.environ["LW_TEST_ZIP"]
        res = bpy.ops.extensions.package_install_files(
            filepath=zip_path, repo="user_default", enable_on_install=True)
        assert res == {"FINISHED"}, res
        STATE["installed_now"] = True
    if not enabled():
        addon_utils.enable(MODULE, default_set=True)
    assert enabled(), f"{MODULE} did not enable"


def pytest_sessionstart(session):
    install_or_enable()


def pytest_sessionfinish(session, exitstatus):
    STATE["exit"] = int(exitstatus)


def pytest_unconfigure(config):
    try:
        if enabled():
            addon_utils.disable(MODULE, default_set=False)
    finally:
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(STATE["exit"])


@pytest.fixture(autouse=True)
def blank_file():
    """An empty file with the add-on enabled, before every test."""
    bpy.ops.wm.read_factory_settings(use_empty=True)
    if not enabled():
        addon_utils.enable(MODULE, default_set=True)
    yield


@pytest.fixture
def addon_module():
    """The installed add-on package (``bl_ext.user_default.leapwright``)."""
    return sys.modules[MODULE]
