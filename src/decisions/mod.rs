//! The per-target, append-only decision log: records, durable append,
//! locking, replay, undo, export and tally.
