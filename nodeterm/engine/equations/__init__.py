"""The node-voltage procedure: recorded steps, equations with per-part terms, the labelled system."""
