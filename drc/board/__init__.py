"""From a flat netlist to recognised stages.

`classify` turns a `Netlist` into a `Board` (rails, contacts, receivers, parts);
`trace` finds every contact-to-receiver path; `recognise` reduces each path to
a `Stage` (its kind and small circuit); `signal_graph` draws one stage as a
networkx graph for people.
"""
