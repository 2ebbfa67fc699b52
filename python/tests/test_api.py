"""The package's surface: the type stubs describe exactly what the compiled module has, every
class and method has a docstring, and the typing marker ships."""

import ast
import inspect
from pathlib import Path

import spinfall
from spinfall import _spinfall

STUB = Path(spinfall.__file__).with_name("_spinfall.pyi")


def stub_tree():
    return ast.parse(STUB.read_text())


def stub_classes():
    """Class name -> set of member names the stub declares."""
    out = {}
    for node in stub_tree().body:
        if isinstance(node, ast.ClassDef):
            out[node.name] = {
                n.name for n in node.body if isinstance(n, ast.FunctionDef)
            } | {
                n.target.id
                for n in node.body
                if isinstance(n, ast.AnnAssign) and isinstance(n.target, ast.Name)
            }
    return out


def runtime_members(cls):
    own = set(vars(cls))
    return {
        name
        for name in own
        if not name.startswith("_") or name in ("__getitem__", "__len__", "__contains__", "__iter__", "__init__")
    }


def test_the_stub_declares_every_public_name_of_the_module():
    declared = {
        n.name for n in stub_tree().body if isinstance(n, ast.ClassDef)
    } | {
        n.target.id
        for n in stub_tree().body
        if isinstance(n, ast.AnnAssign) and isinstance(n.target, ast.Name)
    }
    public = {n for n in dir(_spinfall) if not n.startswith("_")} | {"__version__"}
    assert declared == public
    assert set(spinfall.__all__) == public


def test_the_stub_declares_every_member_of_every_class():
    for name, members in stub_classes().items():
        cls = getattr(_spinfall, name)
        if issubclass(cls, BaseException):
            continue
        runtime = runtime_members(cls)
        if "__init__" in members:
            runtime.add("__init__")  # the constructor is __new__ in the compiled class
        assert members == runtime, name


def test_every_class_and_member_has_a_docstring():
    for name in spinfall.__all__:
        obj = getattr(spinfall, name)
        if inspect.isclass(obj):
            assert obj.__doc__ and obj.__doc__.strip(), name
            for member in runtime_members(obj) - {"__init__", "__getitem__", "__len__", "__contains__", "__iter__"}:
                doc = getattr(obj, member).__doc__
                assert doc and doc.strip(), f"{name}.{member}"


def test_the_package_is_typed_and_says_what_it_is_not():
    assert STUB.with_name("py.typed").exists()
    assert "not flight-certified" in spinfall.CAUTION
    assert "not flight-certified" in spinfall.__doc__
    assert spinfall.G_SI == 6.6743e-11  # CODATA 2018 (value from memory), as the Rust crates use
