"""PURE domain rules of a lot: sampling plans, containers, allowed state changes, signature meanings."""
