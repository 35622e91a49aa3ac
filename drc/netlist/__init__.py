"""Reading netlists: from bytes on disk to a flat `Netlist` of elements.

The public entry is `drc.netlist.reader` (`read_netlist`, `read_netlist_text`,
`ReaderOptions`). Behind it, in data-flow order: lines and positions
(`lines`), the plain-line fast path (`fastpath`), the lark grammar front
(`grammar`, lark imported only when a line needs it), token views (`tokens`),
values and expressions (`values`, `expressions`), the records of the loaded
but unflattened netlist (`specs`), loading (`loader`: the statement walk;
`element_lines`: element lines into specs; `includes`: the include sandbox
and `.lib` sections), parameter scopes (`parameters`), subcircuit flattening
(`flatten`), the `*@drc` annotations, and the `Netlist` record itself
(`elements`). Importing this package imports none of them; nothing here
imports anything downstream of it.
"""
