"""The invented cargo-bike lease sample and the demo folder built from it."""
