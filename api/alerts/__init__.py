"""Alert rules, their evaluation, and the alert lifecycle (firing -> resolved, acknowledged)."""
