//! CLE_κ in the unit disk by radial exploration (DESIGN §6).
