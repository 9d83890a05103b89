//! Throughput benchmark exported to JS (see `catoptric bench`).
