"""Plants, fuels, tags, units and role bindings; the plant file."""
