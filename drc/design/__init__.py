"""Standard-value design: forward design of a new stage and fixes for failing ones."""
