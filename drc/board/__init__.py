"""From a flat netlist to recognised stages.

`board` holds the Board record (rails, contacts, receivers, parts) and
`stage` the Stage record with its small circuit and typed choices (stage
kind, resistor role, actuator state); `classify` turns a `Netlist` into a
`Board`, `trace` finds every contact-to-receiver path, `recognise` reduces
each path to a `Stage`, and `signal_graph` draws one stage as a networkx
graph for people.
"""
