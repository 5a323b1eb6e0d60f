"""Named tables of interchangeable parts (envelopes, potentials, schemes, absorbers,
windows, validation cases, health checks): one decorator for all of them."""

from __future__ import annotations

__all__ = ["registrar", "Parameter"]


def registrar(table: dict, attribute: str | None = "name"):
    """A decorator factory that files classes (or functions) in ``table`` by name.

    ``register_thing = registrar(THINGS)``, then ``@register_thing("name")`` stores the
    decorated object as ``THINGS["name"]`` and, unless ``attribute`` is None, sets that
    attribute of it to the name.
    """

    def register(name: str):
        def decorate(obj):
            if attribute is not None:
                setattr(obj, attribute, name)
            table[name] = obj
            return obj

        return decorate

    register.__doc__ = f"Decorator adding an entry to the table {attribute or 'of entries'} under ``name``."
    return register


class Parameter:
    """One input key that a registered part (a potential, an envelope, an absorber) owns.

    The part declares its keys as a tuple of these; the input reader turns each into
    the key's specification, refuses the keys of the other parts of the same table
    naming the part they belong to, and documents them. Physics modules declare keys
    this way because they may not import the input layer.

    Parameters
    ----------
    name : str
        The key, e.g. ``"depth_parameter"``.
    kind : {"float", "int", "quantity", "choice"}
        How the value is read (a quantity takes a unit, e.g. ``"1.4 bohr"``; a choice
        is one of the strings ``choices``).
    default : object
        Value when the key is absent (None: required or chosen elsewhere).
    doc : str
        One line: what it is, with its unit.
    dimension : str, optional
        For quantities, a key of :data:`tdse1d.units.DIMENSIONS` (``"length"``...).
    minimum, maximum : float, optional
        Allowed range; ``strict`` makes the minimum exclusive.
    choices : tuple of str, optional
        The allowed values of a ``"choice"`` key.
    """

    def __init__(self, name, kind, default=None, doc="", dimension=None, minimum=None, maximum=None,
                 strict=True, choices=()):
        self.name = name
        self.kind = kind
        self.default = default
        self.doc = doc
        self.dimension = dimension
        self.minimum = minimum
        self.maximum = maximum
        self.strict = strict
        self.choices = tuple(choices)

    def __repr__(self):
        return f"Parameter({self.name!r}, {self.kind!r}, default={self.default!r})"
