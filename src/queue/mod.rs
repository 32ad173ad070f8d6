//! What to review: inputs found on disk, listed in a queue file, or taken from
//! a `scan` output; ordering, filters and progress.
