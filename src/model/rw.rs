//! Trial-level Rescorla–Wagner baseline (Rescorla & Wagner 1972).
