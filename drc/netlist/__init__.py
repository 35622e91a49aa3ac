"""Reading netlists: from bytes on disk to a flat `Netlist` of elements.

Lines and positions (`lines`), the plain-line fast path (`fastpath`), the lark
grammar front (`grammar`), values and expressions, the reader that loads,
includes and flattens (`reader`), the `*@drc` annotations, and the `Netlist`
record itself (`elements`). Imports nothing downstream of it.
"""
