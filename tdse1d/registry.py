"""Named tables of interchangeable parts (envelopes, potentials, schemes, absorbers,
windows, validation cases, health checks): one decorator for all of them."""

from __future__ import annotations

__all__ = ["registrar"]


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
