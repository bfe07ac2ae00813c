//! Interrupts: SIGINT and SIGTERM ask the running command to stop and keep what it did.
//!
//! [`install`] registers both signals once at start-up. The first one only sets a flag that
//! the long loops poll ([`requested`]): replay stops reading the bag, sim starts no further
//! episode, tune no further case, calibrate stops reading; each then closes its output bag and
//! writes its summary saying that the run was interrupted, and `main` exits with 128 + the
//! signal number (130 for SIGINT, 143 for SIGTERM), as shells report a process ended by it. A
//! second signal of either kind ends the process at once (exit 1).
//!
//! SIGPIPE gets its default action back (Rust ignores it), so writing to a closed pipe
//! (`sillage check config/ | head -1`) ends the process quietly instead of panicking in
//! `println!`.

use signal_hook::consts::{SIGINT, SIGTERM};
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{Arc, OnceLock};

struct Flags {
    stop: Arc<AtomicBool>,
    which: Arc<AtomicUsize>,
}

static FLAGS: OnceLock<Flags> = OnceLock::new();

fn flags() -> &'static Flags {
    FLAGS.get_or_init(|| Flags { stop: Arc::new(AtomicBool::new(false)), which: Arc::new(AtomicUsize::new(0)) })
}

/// Registers the SIGINT / SIGTERM handlers and restores SIGPIPE's default action.
pub fn install() -> std::io::Result<()> {
    // SAFETY: `signal` with SIG_DFL installs no Rust code as a handler; it only undoes the
    // SIG_IGN the Rust runtime set before `main`, before any other thread exists.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let f = flags();
    for sig in [SIGINT, SIGTERM] {
        // Order matters: the shutdown check sees the flag as it was before this signal.
        signal_hook::flag::register_conditional_shutdown(sig, 1, f.stop.clone())?;
        signal_hook::flag::register_usize(sig, f.which.clone(), sig as usize)?;
        signal_hook::flag::register(sig, f.stop.clone())?;
    }
    Ok(())
}

/// Whether a stop was asked for.
pub fn requested() -> bool {
    flags().stop.load(Ordering::Relaxed)
}

/// The flag itself, for loops in other crates that poll an `&AtomicBool`.
pub fn flag() -> &'static AtomicBool {
    &flags().stop
}

/// The signal that asked for the stop, if one did.
pub fn caught() -> Option<i32> {
    match flags().which.load(Ordering::Relaxed) {
        0 => None,
        s => Some(s as i32),
    }
}

/// The signal's name for messages.
pub fn name(sig: i32) -> &'static str {
    match sig {
        SIGINT => "SIGINT",
        SIGTERM => "SIGTERM",
        _ => "a signal",
    }
}

/// A line for summaries: which signal stopped the run, or `None` when none did.
pub fn interrupted_note() -> Option<String> {
    caught().map(|s| format!("interrupted by {} after the work listed here", name(s)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn signals_are_named_and_numbered_as_the_shell_reports_them() {
        // Exit status 128 + n for a process ended by signal n: POSIX shell convention (Shell
        // Command Language, 2.8.2 Exit Status for Commands); SIGINT = 2, SIGTERM = 15 on Linux
        // (signal(7)).
        assert_eq!((SIGINT, SIGTERM), (2, 15));
        assert_eq!(name(SIGINT), "SIGINT");
        assert_eq!(name(SIGTERM), "SIGTERM");
        assert_eq!(name(9), "a signal");
    }
}
