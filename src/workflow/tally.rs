//! The tally of a campaign: every annotator's ledger read, and the consensus over them.
//! `countersteer tally`, `export` and `plan`, the window and the study all obtain it here.

use super::WorkflowError;
use crate::campaign::Campaign;
use crate::consensus::{Tally, tally};
use crate::ledger::{AnnotatorLedger, read_ledgers};

/// The ledgers of a campaign as read, and their tally.
#[derive(Debug)]
pub struct Tallied {
    /// Every annotator's ledger, as read.
    pub ledgers: Vec<AnnotatorLedger>,
    /// The consensus over them.
    pub tally: Tally,
}

/// Reads every ledger of the campaign (taking no lock) and tallies them.
pub fn tally_campaign(campaign: &Campaign) -> Result<Tallied, WorkflowError> {
    let ledgers = read_ledgers(&campaign.root)?;
    let tally = tally(campaign, &ledgers);
    Ok(Tallied { ledgers, tally })
}
