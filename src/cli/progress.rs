//! Progress display for long work: an indicatif bar on a terminal, nothing
//! when quiet or when stderr is not a terminal (logs stay clean).

use std::io::IsTerminal;

use indicatif::{ProgressBar, ProgressStyle};
use themata::fitting::fit::FitEvent;

/// Shows sweep progress for a fit.
pub struct SweepProgress {
    bar: Option<ProgressBar>,
}

impl SweepProgress {
    /// A bar for `total` sweeps, or nothing when `quiet` or not on a terminal.
    pub fn new(total: u64, quiet: bool) -> SweepProgress {
        let bar = (!quiet && std::io::stderr().is_terminal()).then(|| {
            let bar = ProgressBar::new(total);
            bar.set_style(
                ProgressStyle::with_template(
                    "sampling {bar:30} {pos}/{len} sweeps  {msg}  [{elapsed} < {eta}]",
                )
                .expect("valid template"),
            );
            bar
        });
        SweepProgress { bar }
    }

    /// Takes one fit event.
    pub fn update(&mut self, event: FitEvent) {
        let Some(bar) = &self.bar else { return };
        let FitEvent::Sweep {
            done, log_likelihood, ..
        } = event;
        bar.set_position(done);
        if let Some(value) = log_likelihood {
            bar.set_message(format!("log-likelihood {value:.1}"));
        }
    }

    /// Removes the bar.
    pub fn finish(self) {
        if let Some(bar) = self.bar {
            bar.finish_and_clear();
        }
    }
}
