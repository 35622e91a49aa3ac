"""Bounce injection: random contact chatter driven through one stage, and ngspice decks."""
