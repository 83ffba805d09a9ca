//! Carrier recovery: phase-locked loops and Costas loops (coherent modes).
