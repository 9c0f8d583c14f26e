"""The result protocol every flowkit result follows.

A result is a dataclass deriving from :class:`Result`. It names its array fields
in ``_ARRAYS`` (each holds an ndarray, ``None``, or a dict of ndarrays) and,
optionally, their dimension names in ``_DIMS``; every other field is stored as
tagged JSON. A field holding another result (e.g. the two sections a tolerance
check compares) is named in ``_PARTS`` and stored inside the same file, its
arrays and dimensions prefixed ``<field>.``. From that alone it gets:

- ``save(path)``: ``.npz``, ``.nc`` or ``.json`` by suffix (never pickle), the
  path checked before writing and a fallback copy if the write fails;
- ``flowkit.load(path)``: the right type back from any saved file;
- ``to_xarray()``, ``summary()`` (the JSON the command line prints), a short
  ``__str__``, ``_repr_html_`` for notebooks, and ``flow()`` that rebuilds the
  flow from the recipe in the provenance.

A subclass overrides ``summary()`` and ``headline()`` to say what matters, and
``_from_parts`` only when its constructor is not the plain dataclass one.
"""

from __future__ import annotations

import dataclasses
import functools
import html
from pathlib import Path
from typing import Any, ClassVar

import numpy as np

from flowkit._version import __version__
from flowkit.errors import FlowkitError
from flowkit.results import files
from flowkit.results.encoding import plain

#: Result classes by kind (the name written to files).
KINDS: dict[str, type] = {}

_SEP = "__"  # dict-of-array fields are stored as <field>__<key>


class Result:
    """Base of every flowkit result (see the module docstring)."""

    _ARRAYS: ClassVar[tuple[str, ...]] = ()
    _DIMS: ClassVar[dict[str, tuple[str, ...]]] = {}
    #: fields that hold another Result (stored in the same file, prefixed "<field>.")
    _PARTS: ClassVar[tuple[str, ...]] = ()
    #: name written to files; defaults to the class name
    kind: ClassVar[str] = ""

    def __init_subclass__(cls, **kwargs):
        super().__init_subclass__(**kwargs)
        if not cls.__dict__.get("kind"):
            cls.kind = cls.__name__
        KINDS[cls.kind] = cls
        own = cls.__dict__.get("summary")
        if own is not None and not getattr(own, "_plain", False):
            # a subclass's summary() always comes out as plain JSON (NaN -> None, numpy -> numbers)
            @functools.wraps(own)
            def summary(self, _own=own):
                return plain(_own(self))

            summary._plain = True
            cls.summary = summary

    # -- what a subclass says about itself ---------------------------------------------
    def summary(self) -> dict:
        """JSON-ready headline numbers and settings (what ``--json`` prints)."""
        out = {k: v for k, v in self._fields().items() if k != "provenance"}
        return plain(out)

    def headline(self) -> list[tuple[str, Any, Any]]:
        """Rows ``(label, value, error or None)`` for ``__str__`` and the HTML table."""
        rows = []
        for k, v in self.summary().items():
            if isinstance(v, (int, float, bool, str)) and not isinstance(v, bool) or isinstance(v, bool):
                rows.append((k, v, None))
        return rows[:8]

    # -- storage ---------------------------------------------------------------------
    def _fields(self) -> dict:
        skip = set(self._ARRAYS) | set(self._PARTS)
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self) if f.name not in skip}

    def _arrays(self) -> tuple[dict[str, np.ndarray], dict]:
        """Flat arrays to store and the layout that regroups them."""
        arrays, layout = {}, {}
        for name in self._ARRAYS:
            v = getattr(self, name)
            if v is None:
                layout[name] = None
            elif isinstance(v, dict):
                layout[name] = list(v)
                for i, (key, arr) in enumerate(v.items()):
                    arrays[f"{name}{_SEP}{i}"] = np.asarray(arr)
            else:
                layout[name] = "array"
                arrays[name] = np.asarray(v)
        return arrays, layout

    def _parts(self):
        arrays, layout = self._arrays()
        fields = self._fields()
        for name in self._PARTS:
            sub = getattr(self, name)
            if sub is None:
                layout[name] = None
                continue
            sub_header, fields[name], sub_arrays = sub._parts()
            layout[name] = {"part": sub_header["kind"], "module": sub_header["module"], "layout": sub_header["layout"]}
            arrays.update({f"{name}.{k}": v for k, v in sub_arrays.items()})
        header = {"kind": self.kind, "module": type(self).__module__, "flowkit_version": __version__,
                  "layout": layout}
        return header, fields, arrays

    def _dims(self) -> dict:
        dims = dict(self._DIMS)
        for name in self._PARTS:
            sub = getattr(self, name)
            if sub is not None:  # a part's dimensions are its own (two sections differ in length)
                dims.update({f"{name}.{k}": tuple(f"{name}.{d}" for d in v) for k, v in sub._dims().items()})
        return dims

    def save(self, path) -> Path:
        """Write this result to ``path`` (``.npz``, ``.nc`` or ``.json``); returns the path written.

        Reload with :func:`flowkit.load`. No pickle: arrays plus JSON.
        """
        from flowkit.validation import output_path

        path = output_path(path, "path")
        header, fields, arrays = self._parts()
        return files.write(path, header, fields, arrays, self._dims())

    @classmethod
    def _from_parts(cls, fields: dict, arrays: dict):
        """Build an instance from stored fields and regrouped arrays (override for custom init)."""
        names = {f.name for f in dataclasses.fields(cls) if f.init}
        return cls(**{k: v for k, v in {**fields, **arrays}.items() if k in names})

    @classmethod
    def load(cls, path):
        """Read a file written by :meth:`save`; the stored kind must be this class (or a subclass)."""
        obj = load(path)
        if not isinstance(obj, cls):
            raise FlowkitError(f"{path} holds a {type(obj).__name__}, not a {cls.__name__}; use flowkit.load(path)")
        return obj

    def to_xarray(self):
        """An ``xarray.Dataset`` of the arrays, with the fields and provenance in ``attrs``."""
        header, fields, arrays = self._parts()
        return files.dataset(header, fields, arrays, self._dims())

    # -- looking at it ---------------------------------------------------------------
    def flow(self):
        """Rebuild the flow (or map) this result was computed for, from the recipe in its provenance."""
        from flowkit.flows.registry import rebuild_flow

        prov = getattr(self, "provenance", None) or {}
        fp = prov.get("flow") if isinstance(prov.get("flow"), dict) else prov
        structure = fp.get("structure") or {}
        recipe = structure.get("recipe") or ({"preset": fp["flow"]} if isinstance(fp.get("flow"), str) else None)
        if recipe is None:
            raise FlowkitError(f"this {type(self).__name__} carries no flow recipe in its provenance")
        return rebuild_flow(recipe, fp.get("parameters", {}))

    def __str__(self) -> str:
        parts = [f"{k} = {_fmt(v, e)}" for k, v, e in self.headline()]
        return f"{type(self).__name__}({', '.join(parts)})"

    def _repr_html_(self) -> str:
        prov = getattr(self, "provenance", None) or {}
        rows = [f"<tr><th colspan=2 style='text-align:left'>{html.escape(type(self).__name__)}</th></tr>"]
        for k, v, e in self.headline():
            rows.append(f"<tr><td>{html.escape(str(k))}</td><td>{html.escape(_fmt(v, e))}</td></tr>")
        for k, v in _provenance_rows(prov):
            rows.append(f"<tr><td><i>{html.escape(k)}</i></td><td>{html.escape(v)}</td></tr>")
        return "<table class='flowkit-result'>" + "".join(rows) + "</table>"


def _fmt(v, e=None) -> str:
    if isinstance(v, float):
        s = f"{v:.6g}"
    else:
        s = str(v)
    if e is not None and isinstance(e, (int, float)) and e == e:
        s += f" ± {e:.2g}"
    return s


def _provenance_rows(prov: dict) -> list[tuple[str, str]]:
    """Flatten the provenance to (label, text) rows: flow, parameters, settings, version."""
    rows = []
    flat = dict(prov)
    fp = flat.pop("flow", None)
    if isinstance(fp, dict):
        rows.append(("flow", str(fp.get("flow", ""))))
        pars = fp.get("parameters") or {}
        if pars:
            rows.append(("parameters", ", ".join(f"{k}={v:g}" if isinstance(v, (int, float)) else f"{k}={v}"
                                                 for k, v in pars.items())))
        if fp.get("flowkit_version"):
            flat.setdefault("flowkit_version", fp["flowkit_version"])
    elif isinstance(fp, str):
        rows.append(("flow", fp))
        if prov.get("parameters"):
            rows.append(("parameters", str(prov["parameters"])))
            flat.pop("parameters", None)
    for k in ("formula", "structure", "parameters"):
        flat.pop(k, None)
    for k, v in flat.items():
        text = str(plain(v))
        rows.append((k, text if len(text) < 120 else text[:117] + "..."))
    return rows


def load(path):
    """Reopen any flowkit result file (``.npz``, ``.nc``, ``.json``) as its own type.

    Only flowkit's own result classes can be built, and no code from the file runs.
    """
    header, fields, arrays = files.read(path)
    return _build(header["kind"], header.get("module"), header.get("layout") or {}, fields, arrays, path)


def _build(kind: str, module, layout: dict, fields: dict, arrays: dict, path):
    """One result (and, recursively, its parts) from stored fields and flat arrays."""
    cls = _result_class(kind, module, path)
    regrouped: dict[str, Any] = {}
    for name, lay in layout.items():
        if lay is None:
            regrouped[name] = None
        elif isinstance(lay, dict) and isinstance(lay.get("part"), str):
            prefix = f"{name}."
            sub_arrays = {k[len(prefix):]: v for k, v in arrays.items() if k.startswith(prefix)}
            sub_fields = fields.get(name)
            if not isinstance(sub_fields, dict):
                raise FlowkitError(f"{path}: the fields of part {name!r} are missing")
            regrouped[name] = _build(lay["part"], lay.get("module"), lay.get("layout") or {}, sub_fields,
                                     sub_arrays, path)
        elif lay == "array":
            if name not in arrays:
                raise FlowkitError(f"{path}: array {name!r} is missing")
            regrouped[name] = arrays[name]
        elif isinstance(lay, list):
            regrouped[name] = {key: arrays[f"{name}{_SEP}{i}"] for i, key in enumerate(lay)}
        else:
            raise FlowkitError(f"{path}: bad layout entry for {name!r}")
    try:
        return cls._from_parts(fields, regrouped)
    except TypeError as exc:
        raise FlowkitError(f"{path}: stored fields do not fit a {cls.__name__} ({exc})") from None


def _result_class(kind: str, module, path):
    from flowkit.results.kinds import MODULES

    if kind not in KINDS:
        import importlib

        mod = MODULES.get(kind)
        if mod is None and isinstance(module, str) and module.startswith("flowkit.") and \
                all(part.isidentifier() for part in module.split(".")):
            mod = module  # a flowkit module named in the header: importing flowkit's own code runs nothing from the file
        if mod is None:
            raise FlowkitError(f"{path}: unknown result kind {kind!r}")
        try:
            importlib.import_module(mod)
        except ImportError:
            raise FlowkitError(f"{path}: result kind {kind!r} comes from {mod}, which this flowkit does not have") \
                from None
    if kind not in KINDS:
        raise FlowkitError(f"{path}: unknown result kind {kind!r}")
    return KINDS[kind]
