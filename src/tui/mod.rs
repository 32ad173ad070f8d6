//! The interactive review shell (ratatui + crossterm): app state, key
//! handling, widgets, themes and the background prefetch worker.
