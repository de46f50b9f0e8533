//! Review: from a scored round to the budgeted, diverse list of steps the expert should see.
//!
//! [`excursions`] finds runs of flagged steps with hysteresis; [`plan`] gathers candidates
//! (excursion onsets and peaks, steps before interventions, large action gaps), ranks them and
//! chooses a diverse subset by greedy [`kcenter`] seeded with existing corrections; [`store`]
//! writes the list to the campaign and reads it back, and [`brief`] gathers what the expert needs to judge one step.

pub mod brief;
pub mod episodes;
pub mod excursions;
pub mod failure;
pub mod kcenter;
pub mod plan;
pub mod sampling;
pub mod store;

pub use brief::{ChannelLine, FeatureLine, StepBrief};
pub use episodes::{EpisodeStats, episode_stats};
pub use excursions::{Excursion, ExcursionSettings, excursions};
pub use plan::{
    DEFAULT_BUDGET, DEFAULT_SAMPLE_SHARE, PlanNote, PlanSettings, Planner, Reason, ReviewEntry,
    ReviewList, plan, states_of_rows,
};
