"""The performance harness behind ``partsdb bench`` (:mod:`.bench`) and the synthetic catalog it
measures on (:mod:`.synthetic`): tooling beside the product, not part of its domain."""
