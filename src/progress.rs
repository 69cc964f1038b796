//! The one progress-bar factory: on stderr, hidden by `--quiet` or when stderr is not a
//! terminal.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;

/// A bar counting `len` items named `what` (stations, nodes), with rate and ETA; hidden
/// when `quiet` or when stderr is not a terminal.
pub fn bar(len: u64, quiet: bool, what: &str) -> ProgressBar {
    if quiet || !std::io::stderr().is_terminal() {
        return ProgressBar::hidden();
    }
    let bar = ProgressBar::with_draw_target(Some(len), ProgressDrawTarget::stderr());
    let template = format!(
        "{{elapsed_precise}} [{{wide_bar}}] {{pos}}/{{len}} {what} {{per_sec}} ETA {{eta}}"
    );
    bar.set_style(
        ProgressStyle::with_template(&template)
            .expect("valid template")
            .progress_chars("=> "),
    );
    bar
}
