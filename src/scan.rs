//! The batch shell: inputs -> identifier core -> JSON Lines / CSV, with
//! worker threads, deterministic shards and a progress bar.
