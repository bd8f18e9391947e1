//! The handler of SIGINT, SIGTERM and SIGHUP: it waits for a write or rename in progress
//! (see [`crate::output::hold`]), deletes every temporary file and folder still registered
//! ([`crate::output::discard_pending`]) and ends the process as the signal would have
//! (terminated by that signal; a shell shows status 128 + its number). An interrupted command
//! so leaves either its finished outputs or none, and no temporary file beside them.

/// Installs the handler (once; later calls do nothing). Where signals cannot be caught the
/// default action stays.
pub fn install() {
    #[cfg(unix)]
    {
        static ONCE: std::sync::Once = std::sync::Once::new();
        ONCE.call_once(|| {
            use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
            let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP])
            else {
                return;
            };
            let spawned = std::thread::Builder::new()
                .name("interrupt".into())
                .spawn(move || {
                    if let Some(signal) = signals.forever().next() {
                        // Held until the process ends: no write or rename starts after this.
                        let mut pending = crate::output::hold();
                        let removed = pending.len();
                        let left = crate::output::discard_pending(&mut pending);
                        let name = match signal {
                            SIGINT => "SIGINT",
                            SIGTERM => "SIGTERM",
                            _ => "SIGHUP",
                        };
                        if left.is_empty() {
                            eprintln!(
                                "error: interrupted ({name}); {removed} unfinished output(s) removed"
                            );
                        } else {
                            let left: Vec<String> =
                                left.iter().map(|p| p.display().to_string()).collect();
                            eprintln!(
                                "error: interrupted ({name}); could not remove the unfinished output(s) {}",
                                left.join(", ")
                            );
                        }
                        let _ = signal_hook::low_level::emulate_default_handler(signal);
                        std::process::exit(128 + signal);
                    }
                });
            drop(spawned);
        });
    }
}
