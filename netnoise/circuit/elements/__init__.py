"""The element kinds, one module each (the protocol is in :mod:`.base`, the list in
:mod:`netnoise.circuit.registry`)."""
