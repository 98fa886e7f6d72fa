"""The type stubs (src/python/zeeline.pyi) describe the module: the same public names, and every keyword
they name is an option of the command (its --help text, kept in the function's docstring)."""
import ast
import os

import zeeline

STUBS = os.path.join(os.path.dirname(zeeline.__file__), "zeeline.pyi")
# Arguments of the functions themselves, not options of a command.
OWN = {"level", "gs", "wavelength_nm", "I", "Q", "U", "V", "cube", "stokes", "cube_frame", "spectrum", "table",
       "flags", "options"}


def _stub_functions():
    with open(STUBS) as f:
        tree = ast.parse(f.read())
    return {n.name: n for n in tree.body if isinstance(n, ast.FunctionDef)}


def test_the_stubs_sit_next_to_the_module_and_name_every_function():
    public = {n for n in dir(zeeline) if not n.startswith("_") and callable(getattr(zeeline, n))}
    assert set(_stub_functions()) == public


def test_every_stub_keyword_is_an_option_of_the_command():
    for name, fn in _stub_functions().items():
        doc = getattr(zeeline, name).__doc__
        args = fn.args.args + fn.args.kwonlyargs
        for a in args:
            if a.arg in OWN or name == "quality_names":
                continue
            option = "--" + a.arg.replace("_", "-")
            assert option in doc, f"{name}({a.arg}=...): {option} is not an option of the command"
