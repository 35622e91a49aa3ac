"""The engineering library: rules/*.toml read into typed records.

`entries` holds the records (logic families, part types and pins, contact
classes, limits) and their vocabularies, `curves` the forms a figure takes
against VCC, `rules_files` reads and checks the files, `catalogue` loads a
rules folder into a `Library` and answers lookups by name, with
`part_numbers` (SN74HC14N -> part type 14, family HC) and `contact_names`
(SW_PUSH -> class tactile, SPST-NO). `eseries` holds the IEC 60063
preferred-number series.
"""
