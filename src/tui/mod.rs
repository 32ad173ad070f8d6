//! The interactive review shell (ratatui + crossterm).
//!
//! - [`app`]: the state ([`app::App`]), its messages ([`app::Msg`]) and the
//!   one `update` function, which returns [`app::Effect`]s instead of doing
//!   I/O itself.
//! - [`keys`]: the key map (the help overlay and footer are generated from it).
//! - [`widgets`]: one file per part of the screen; each draws from `&App`.
//! - [`theme`]: roles -> styles, loaded from `themes/*.toml`.
//! - [`config`]: the user's config file (observer, log folder, theme, keys,
//!   named sites).
//! - [`worker`]: the background thread that reads and analyses targets ahead
//!   of the person (latest request wins).
//! - [`journal`]: where decisions go (the decision log) and where they come
//!   from at start.
//! - [`run`]: the terminal runtime: raw mode, event loop, signals, panic hook.
//! - [`lean`]: the terminal backend, which sends fewer bytes than ratatui's
//!   own for the same changes (slow links).

pub mod app;
pub mod config;
pub mod decision_log;
pub mod journal;
pub mod keys;
pub mod lean;
pub mod run;
pub mod theme;
pub mod widgets;
pub mod worker;
