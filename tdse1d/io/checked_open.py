"""Opening a result file given to a reading command (plot, export, report, compare).

Every reader refuses a bad file the same way: one line naming the file and what is
wrong, exit status 2 (bad input, as for an input file; see :mod:`tdse1d.cli.program`):

* no such file, or a folder;
* not an HDF5 file;
* not finished: the run or scan that writes it did not mark it complete (a file that
  is still being written, or was left by a failed run);
* of a kind the command does not read (``kind`` root attribute);
* a dataset, group or attribute the command needs is missing (a damaged file, or one
  written by another version): the error names it.

The last check happens as the command reads: :func:`open_result` hands out a view of
the file whose lookups raise :class:`MissingData` instead of h5py's ``KeyError``.
"""

from __future__ import annotations

import contextlib
from pathlib import Path

from ..input.spec import InputError

__all__ = ["MissingData", "open_result", "check_result"]


class MissingData(InputError, KeyError):
    """A dataset, group or attribute a command needs is not in the file (exit status 2).

    Also a ``KeyError``, so code that probes for optional data by catching
    ``KeyError`` keeps working on the view.
    """


def _kind(h5file) -> str:
    kind = h5file.attrs.get("kind", "run")
    return kind.decode() if isinstance(kind, bytes) else str(kind)


def check_result(path, kinds=None, needs=None) -> str:
    """Refuse a file that is not a finished result of one of ``kinds``; return its kind.

    Parameters
    ----------
    path : path
        The file given on the command line.
    kinds : iterable of str, optional
        Accepted values of the ``kind`` root attribute (a run file written before the
        attribute existed is a ``"run"``); None accepts any.
    needs : dict of str to iterable of str, optional
        Kind -> datasets or groups the command reads (a missing one is named).

    Raises
    ------
    InputError
        Naming the file and what is wrong with it.
    """
    import h5py

    from .guarded_file import COMPLETE_ATTR
    from .layout import find

    source = str(path)
    p = Path(path)
    if not p.exists():
        raise InputError("no such file", source=source)
    if p.is_dir():
        raise InputError("is a folder, not a result file", source=source)
    try:
        if not h5py.is_hdf5(p):
            raise InputError("not an HDF5 file, so not a tdse1d result", source=source)
        with h5py.File(p, "r") as f:
            complete = bool(f.attrs.get(COMPLETE_ATTR, False))
            kind = _kind(f)
            missing = [name for name in (needs or {}).get(kind, ()) if find(f, name) is None]
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc})", source=source) from None
    if not complete:
        raise InputError("not a finished tdse1d result: the run or scan writing it has not marked it complete "
                         "(still running, or stopped)", source=source)
    if kinds is not None and kind not in tuple(kinds):
        raise InputError(f"is a {kind!r} file; this command reads {' or '.join(repr(k) for k in kinds)} files",
                         source=source)
    if missing:
        raise MissingData(f"missing dataset or group '{missing[0]}' (a damaged file, or written by another version)",
                          source=source)
    return kind


class _Attributes:
    """``node.attrs`` whose missing entries raise :class:`MissingData`."""

    def __init__(self, attrs, where: str, source: str):
        self._attrs, self._where, self._source = attrs, where, source

    def __getitem__(self, name):
        try:
            return self._attrs[name]
        except KeyError:
            raise MissingData(f"missing attribute '{name}' of '{self._where}' (a damaged file, or written by "
                              "another version)", source=self._source) from None

    def __contains__(self, name):
        return name in self._attrs

    def __iter__(self):
        return iter(self._attrs)

    def __len__(self):
        return len(self._attrs)

    def __getattr__(self, name):  # get, items, keys, values
        return getattr(self._attrs, name)


class _Node:
    """A group of an open file whose missing members raise :class:`MissingData`.

    Datasets are handed out as h5py datasets; groups as views like this one."""

    def __init__(self, node, source: str):
        self._node, self._source = node, source

    def __getitem__(self, key):
        import h5py

        try:
            item = self._node[key]
        except KeyError:
            where = f"{self._node.name.rstrip('/')}/{key}".lstrip("/")
            raise MissingData(f"missing dataset or group '{where}' (a damaged file, or written by another version)",
                              source=self._source) from None
        return _Node(item, self._source) if isinstance(item, h5py.Group) else item

    def __contains__(self, key):
        return key in self._node

    def __iter__(self):
        return iter(self._node)

    def __len__(self):
        return len(self._node)

    @property
    def attrs(self):
        return _Attributes(self._node.attrs, self._node.name, self._source)

    def get(self, key, default=None):
        return self[key] if key in self._node else default

    def __getattr__(self, name):  # name, keys, items, file, ...
        return getattr(self._node, name)


@contextlib.contextmanager
def open_result(path, kinds=None):
    """Open a finished result file for reading, as a view that names missing data.

    Parameters
    ----------
    path : path
    kinds : iterable of str, optional
        See :func:`check_result`.

    Yields
    ------
    view of the open h5py.File
        ``view[key]``, ``key in view``, ``view.attrs[...]`` as on the file; a missing
        member raises :class:`MissingData` naming it. ``view.kind`` is the file's kind.

    Raises
    ------
    InputError
        See :func:`check_result`.
    """
    import h5py

    kind = check_result(path, kinds)
    with h5py.File(path, "r") as f:
        view = _Node(f, str(path))
        view.kind = kind
        yield view
