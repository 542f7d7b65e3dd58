"""The model description: a device card (units at the edge), its parameter table and the
language-neutral ModelIR built from the physics blocks, with the lowering that transforms it."""
