"""planner.lazyimport: scipy's subpackages imported on first use, on a thread of their own."""

import sys
import threading

import pytest

from planner import lazyimport


def test_a_subpackage_already_loaded_comes_back_as_it_is():
    import scipy.signal

    assert lazyimport.scipy_module("signal") is scipy.signal


def test_a_first_import_runs_on_a_thread_of_its_own(monkeypatch):
    # scipy.io.wavfile taken out of sys.modules for the test; the import hook records the
    # thread that imports it.
    for name in [m for m in sys.modules if m == "scipy.io.wavfile"]:
        monkeypatch.delitem(sys.modules, name)
    seen = []

    class Spy:
        def find_spec(self, name, path=None, target=None):
            if name == "scipy.io.wavfile":
                seen.append(threading.current_thread().name)
            return None

    monkeypatch.setattr(sys, "meta_path", [Spy(), *sys.meta_path])
    mod = lazyimport.scipy_module("io.wavfile")
    assert mod.__name__ == "scipy.io.wavfile" and hasattr(mod, "write")
    assert seen == ["import scipy.io.wavfile"]


def test_a_module_that_does_not_exist_raises_in_the_caller():
    with pytest.raises(ModuleNotFoundError, match="scipy.no_such_thing"):
        lazyimport.scipy_module("no_such_thing")
