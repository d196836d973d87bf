//! Where a shift's results go: the [`ShiftSink`] trait and the set that feeds them.
//!
//! # Why push
//!
//! The shift engine pushes each evaluated test and each decided lot into sinks, one at
//! a time, instead of building one structure of everything and handing it around:
//! - **Memory** stays bounded by one result row per test (DESIGN.md §8): no sink sees a
//!   curve, and a sink that writes as it goes (the tests CSV) keeps nothing.
//! - **A plugin seam**: a plant's MES feed, the history store and the reports are all
//!   just sinks, so a new destination is one more implementation, not a change to the
//!   engine.
//! - **A test seam**: a test can record what the engine pushes, in order, without
//!   writing files.
//!
//! # Failures
//!
//! A sink says what its failure means ([`FailurePolicy`]): the outputs a person signs
//! or the next shift reads (lot reports, the shift summary, `tests.csv`, `summary.json`,
//! the switching record) stop the run, because a missing report or record must not go
//! unnoticed; exec sinks feeding other systems only record their failure in
//! `summary.json` and the terminal, because another system's outage must not block the
//! plant's own records. No sink failure ever changes a disposition.

use crate::evaluate::CurvePreview;
use crate::plant::SpecEntry;
use std::path::Path;
use twistlot_model::{LotRecord, ShiftRecord, TestRecord, Verdict};

/// What a failing sink does to the run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FailurePolicy {
    /// The run stops with the error.
    StopRun,
    /// The failure is recorded in `summary.json` (`sink_failures`) and the run goes on.
    Record,
}

/// A sink's failure.
#[derive(Debug, thiserror::Error)]
pub enum SinkError {
    /// A file could not be written.
    #[error("cannot write {}", path.display())]
    Write {
        /// The file.
        path: std::path::PathBuf,
        /// What the file system said.
        #[source]
        source: std::io::Error,
    },
    /// A document could not be rendered.
    #[error("cannot render {what}")]
    Render {
        /// Which document.
        what: String,
        /// Why.
        #[source]
        source: twistlot_report::ReportError,
    },
    /// An exec sink plugin failed.
    #[error("{0}")]
    Plugin(String),
    /// The history could not be written.
    #[error("the shift could not be stored in the history")]
    History(#[source] twistlot_history::HistoryError),
    /// Anything else, in words.
    #[error("{0}")]
    Other(String),
}

/// The start of a shift, as sinks see it.
#[derive(Debug, Clone, Copy)]
pub struct ShiftStart<'a> {
    /// Shift name.
    pub shift: &'a str,
    /// Plant name.
    pub plant: &'a str,
    /// Output folder.
    pub out_dir: &'a Path,
    /// When the run made its outputs, already formatted.
    pub generated_at: &'a str,
}

/// A curve kept for a lot's overlay chart.
#[derive(Debug, Clone, PartialEq)]
pub struct LotCurve {
    /// The test's label (its serial, or its file).
    pub label: String,
    /// The test's verdict (none when there was no spec).
    pub verdict: Option<Verdict>,
    /// The thinned curve.
    pub preview: CurvePreview,
}

/// A decided lot and what the reports need to show it.
#[derive(Debug, Clone, Copy)]
pub struct LotEvent<'a> {
    /// The lot record (its `rejected_files` are this lot's unreadable files).
    pub record: &'a LotRecord,
    /// Every test of the lot (counted, duplicate and superseded), in file order.
    pub tests: &'a [&'a TestRecord],
    /// Curves kept for the overlay chart, failed and invalid first.
    pub curves: &'a [LotCurve],
    /// Tests of the lot that carried a curve, whether or not it was kept.
    pub curves_seen: usize,
    /// The part's spec, when there is one.
    pub spec: Option<&'a SpecEntry>,
    /// The scheme the lot was decided under, when there is one.
    pub scheme: Option<&'a twistlot_sampling::Scheme>,
    /// Unreadable files of the shift whose lot could not be told (listed in the shift summary).
    pub unassigned_rejected: usize,
}

/// A destination for a shift's results; every method has a default that does nothing,
/// so a sink implements only the events it needs.
pub trait ShiftSink {
    /// A short name for messages (`lot reports`, `sink append-jsonl`…).
    fn name(&self) -> String;

    /// What a failure of this sink does to the run.
    fn failure_policy(&self) -> FailurePolicy {
        FailurePolicy::StopRun
    }

    /// The shift starts (before any test).
    fn start(&mut self, _shift: &ShiftStart<'_>) -> Result<(), SinkError> {
        Ok(())
    }

    /// One evaluated test, in file order, with its counting status settled.
    fn test(&mut self, _test: &TestRecord) -> Result<(), SinkError> {
        Ok(())
    }

    /// One decided lot, in lot-list order.
    fn lot(&mut self, _lot: &LotEvent<'_>) -> Result<(), SinkError> {
        Ok(())
    }

    /// The shift ends; `shift` is what `summary.json` holds.
    fn end(&mut self, _shift: &ShiftRecord) -> Result<(), SinkError> {
        Ok(())
    }
}

/// A sink failure that stopped the run.
#[derive(Debug, thiserror::Error)]
#[error("{sink} failed")]
pub struct StoppedBy {
    /// The sink's name.
    pub sink: String,
    /// Its error.
    #[source]
    pub source: SinkError,
}

/// The sinks of one run, fed in the order they were added.
#[derive(Default)]
pub struct SinkSet {
    sinks: Vec<Box<dyn ShiftSink>>,
    failures: Vec<String>,
}

impl SinkSet {
    /// Adds a sink; sinks receive every event in the order they were added.
    pub fn push(&mut self, sink: Box<dyn ShiftSink>) {
        self.sinks.push(sink);
    }

    /// Failures recorded so far (sinks whose failures do not stop the run).
    pub fn failures(&self) -> &[String] {
        &self.failures
    }

    fn each(
        &mut self,
        context: &str,
        mut call: impl FnMut(&mut dyn ShiftSink) -> Result<(), SinkError>,
    ) -> Result<(), StoppedBy> {
        for sink in &mut self.sinks {
            if let Err(source) = call(sink.as_mut()) {
                match sink.failure_policy() {
                    FailurePolicy::StopRun => return Err(StoppedBy { sink: sink.name(), source }),
                    FailurePolicy::Record => {
                        self.failures.push(format!("{}, {context}: {}", sink.name(), error_chain(&source)))
                    }
                }
            }
        }
        Ok(())
    }

    /// Feeds the start of the shift.
    pub fn start(&mut self, shift: &ShiftStart<'_>) -> Result<(), StoppedBy> {
        self.each("at the start", |sink| sink.start(shift))
    }

    /// Feeds one test.
    pub fn test(&mut self, test: &TestRecord) -> Result<(), StoppedBy> {
        self.each(&format!("test {}", test.file), |sink| sink.test(test))
    }

    /// Feeds one lot.
    pub fn lot(&mut self, lot: &LotEvent<'_>) -> Result<(), StoppedBy> {
        self.each(&format!("lot {}", lot.record.lot), |sink| sink.lot(lot))
    }

    /// Feeds the end of the shift.
    pub fn end(&mut self, shift: &ShiftRecord) -> Result<(), StoppedBy> {
        self.each("at the end", |sink| sink.end(shift))
    }
}

/// An error and its causes on one line.
pub fn error_chain(error: &dyn std::error::Error) -> String {
    let mut text = error.to_string();
    let mut source = error.source();
    while let Some(cause) = source {
        text.push_str(": ");
        text.push_str(&cause.to_string());
        source = cause.source();
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Flaky {
        policy: FailurePolicy,
        seen: std::rc::Rc<std::cell::RefCell<Vec<String>>>,
    }

    impl ShiftSink for Flaky {
        fn name(&self) -> String {
            format!("flaky {:?}", self.policy)
        }
        fn failure_policy(&self) -> FailurePolicy {
            self.policy
        }
        fn test(&mut self, test: &TestRecord) -> Result<(), SinkError> {
            self.seen.borrow_mut().push(test.file.clone());
            Err(SinkError::Other("down".into()))
        }
    }

    fn record(file: &str) -> TestRecord {
        TestRecord {
            test_id: file.into(),
            file: file.into(),
            content_hash: String::new(),
            serial: None,
            part: None,
            lot: None,
            rig: None,
            operator: None,
            started: None,
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics: Default::default(),
            swing: None,
            theory: None,
            verdict: None,
            findings: Vec::new(),
            status: Default::default(),
        }
    }

    #[test]
    fn recorded_failures_go_on_and_stopping_failures_stop() {
        let seen = std::rc::Rc::new(std::cell::RefCell::new(Vec::new()));
        let mut set = SinkSet::default();
        set.push(Box::new(Flaky { policy: FailurePolicy::Record, seen: seen.clone() }));
        assert!(set.test(&record("a.csv")).is_ok());
        assert_eq!(set.failures(), ["flaky Record, test a.csv: down"]);
        set.push(Box::new(Flaky { policy: FailurePolicy::StopRun, seen: seen.clone() }));
        let stopped = set.test(&record("b.csv")).unwrap_err();
        assert_eq!(stopped.sink, "flaky StopRun");
        // Both sinks saw b.csv, in the order they were added.
        assert_eq!(*seen.borrow(), ["a.csv", "b.csv", "b.csv"]);
    }

    #[test]
    fn a_sink_that_implements_nothing_accepts_every_event() {
        struct Quiet;
        impl ShiftSink for Quiet {
            fn name(&self) -> String {
                "quiet".into()
            }
        }
        let mut set = SinkSet::default();
        set.push(Box::new(Quiet));
        assert!(set.test(&record("a.csv")).is_ok());
        assert!(set.failures().is_empty());
    }
}
