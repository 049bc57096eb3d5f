//! Options of the analysis: alignment scoring, the null model, harmony and score following.

use super::error::UsageError;
use clap::Args;
use std::path::PathBuf;

/// Harmonic evidence and the alignment of a recording to a score.
#[derive(Debug, Args)]
pub struct HarmonyArgs {
    /// Leave out the harmonic (chroma) comparison.
    #[arg(long, help_heading = "HARMONY")]
    pub no_harmony: bool,
    /// Shuffled recurrence plots behind each harmonic passage's p-value.
    #[arg(value_parser = super::ranges::count(0, 10_000), long, default_value_t = 99, value_name = "N", help_heading = "HARMONY")]
    pub harmony_shuffles: usize,
    /// Largest p-value of a harmonic passage reported.
    #[arg(value_parser = super::ranges::number(0.0, 1.0),
        long,
        default_value_t = 0.05,
        value_name = "P",
        help_heading = "HARMONY"
    )]
    pub harmony_max_p: f64,
    /// Keep a recording's beat-tracked bars even when it follows the score it is compared
    /// with (by default the score's bars are put onto the recording by chroma alignment).
    #[arg(long, help_heading = "HARMONY")]
    pub keep_recording_bars: bool,
}

impl HarmonyArgs {
    /// The library parameters of the harmonic comparison, `None` when it is left out.
    pub fn params(&self) -> Result<Option<collatio::align::harmony::HarmonyParams>, UsageError> {
        if !(0.0..=1.0).contains(&self.harmony_max_p) {
            return Err(UsageError(
                "--harmony-max-p must lie between 0 and 1".into(),
            ));
        }
        Ok(
            (!self.no_harmony).then(|| collatio::align::harmony::HarmonyParams {
                shuffles: self.harmony_shuffles,
                max_p: self.harmony_max_p,
                ..collatio::align::harmony::HarmonyParams::default()
            }),
        )
    }

    /// The score-following parameters, `None` when a recording keeps its own bars.
    pub fn sync_params(&self) -> Option<collatio::align::sync::SyncParams> {
        (!self.keep_recording_bars).then(collatio::align::sync::SyncParams::default)
    }
}

/// `--null` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum NullArg {
    /// The corpus null with --corpus, else the general null (default scoring), else shuffles.
    Auto,
    /// The general null fitted on real melodies and shipped with collatio.
    General,
    /// Shuffles of the two melodies.
    Shuffles,
    /// No chance figures.
    Off,
}

/// The null model of unrelated melodies.
#[derive(Debug, Args)]
pub struct StatisticsArgs {
    /// Null model behind the E-values: auto takes the corpus null with --corpus (A against the
    /// corpus melodies), else the general null fitted on real melodies, else shuffles.
    #[arg(long, value_enum, default_value_t = NullArg::Auto, help_heading = "STATISTICS")]
    pub null: NullArg,
    /// Corpus melodies the corpus null is fitted on.
    #[arg(
        long,
        default_value_t = 300,
        value_name = "N",
        value_parser = clap::value_parser!(u64).range(50..=100_000),
        help_heading = "STATISTICS"
    )]
    pub references: u64,
    /// Shuffled pairs scored when the shuffle null is used (0 = no E-values from it).
    #[arg(value_parser = super::ranges::count(0, 100_000),
        long,
        default_value_t = 100,
        value_name = "N",
        help_heading = "STATISTICS"
    )]
    pub shuffles: usize,
    /// Seed of the shuffles' random generator.
    #[arg(long, default_value_t = 20_261_201, help_heading = "STATISTICS")]
    pub seed: u64,
    /// Runs of consecutive pitches the shuffles keep, 2 to 8: 4 is calibrated on unrelated
    /// real tunes; shorter runs let the shuffles reorder a melody with few repeated figures
    /// more freely, at the price of more chance agreement between idiomatic melodies.
    #[arg(
        long,
        default_value_t = 4,
        value_name = "K",
        value_parser = clap::value_parser!(u8).range(2..=8),
        help_heading = "STATISTICS"
    )]
    pub shuffle_runs: u8,
    /// Corpus index (from `collatio corpus build`): how common each passage's figure is, and a
    /// corpus-weighted similarity.
    #[arg(long, value_name = "FILE", help_heading = "STATISTICS")]
    pub corpus: Option<PathBuf>,
}

impl StatisticsArgs {
    /// The library parameters.
    pub fn chance_params(&self) -> collatio::stats::chance::ChanceParams {
        use collatio::stats::chance::NullChoice;
        collatio::stats::chance::ChanceParams {
            null: match self.null {
                NullArg::Auto => NullChoice::Auto,
                NullArg::General => NullChoice::General,
                NullArg::Shuffles => NullChoice::Shuffles,
                NullArg::Off => NullChoice::Off,
            },
            references: self.references as usize,
            shuffles: collatio::stats::null::NullParams {
                shuffles: self.shuffles,
                seed: self.seed,
                run_length: usize::from(self.shuffle_runs),
            },
        }
    }
}

/// Scoring of the alignment, in points per note pair.
#[derive(Debug, Args)]
pub struct AlignmentArgs {
    /// Points for the same pitch class after transposing.
    #[arg(value_parser = super::ranges::points(),
        long,
        default_value_t = 8,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub pitch_match: i32,
    /// Points for a pitch one semitone off.
    #[arg(value_parser = super::ranges::points(), long, default_value_t = -4, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub pitch_near: i32,
    /// Points for any other pitch.
    #[arg(value_parser = super::ranges::points(), long, default_value_t = -8, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub pitch_mismatch: i32,
    /// Points for the same interval into both notes.
    #[arg(value_parser = super::ranges::points(),
        long,
        default_value_t = 4,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub interval_match: i32,
    /// Points for intervals in one direction within two semitones.
    #[arg(value_parser = super::ranges::points(),
        long,
        default_value_t = 0,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub interval_near: i32,
    /// Points for other intervals.
    #[arg(value_parser = super::ranges::points(), long, default_value_t = -4, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub interval_mismatch: i32,
    /// Points for the same rhythm (inter-onset ratio to the previous note).
    #[arg(value_parser = super::ranges::points(),
        long,
        default_value_t = 2,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub rhythm_match: i32,
    /// Points for rhythms within a factor of two.
    #[arg(value_parser = super::ranges::points(),
        long,
        default_value_t = 0,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub rhythm_near: i32,
    /// Points for other rhythms.
    #[arg(value_parser = super::ranges::points(), long, default_value_t = -3, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub rhythm_mismatch: i32,
    /// Points for the same metric level (downbeat, half-bar beat, other beat, between beats).
    #[arg(value_parser = super::ranges::points(),
        long,
        default_value_t = 1,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub metric_match: i32,
    /// Cost of opening a gap (one unmatched note).
    #[arg(value_parser = super::ranges::cost(), long, default_value_t = 16, help_heading = "ALIGNMENT")]
    pub gap_open: i32,
    /// Cost of each further unmatched note in a gap.
    #[arg(value_parser = super::ranges::cost(), long, default_value_t = 8, help_heading = "ALIGNMENT")]
    pub gap_extend: i32,
    /// Cost per extra note when one note is split into repeated notes.
    #[arg(value_parser = super::ranges::cost(), long, default_value_t = 2, help_heading = "ALIGNMENT")]
    pub fragment_penalty: i32,
    /// Most repeated notes one note may be split into (1 = no splitting, at most 3).
    #[arg(long, default_value_t = 3, value_parser = clap::value_parser!(u8).range(1..=3), help_heading = "ALIGNMENT")]
    pub max_fragments: u8,
    /// Lowest score reported as a passage.
    #[arg(value_parser = clap::value_parser!(i32).range(1..=1_000_000_000), long, default_value_t = 60, help_heading = "ALIGNMENT")]
    pub min_score: i32,
    /// Fewest notes on each side of a passage.
    #[arg(value_parser = super::ranges::count(1, super::ranges::MAX_NOTES), long, default_value_t = 5, help_heading = "ALIGNMENT")]
    pub min_notes: usize,
    /// Most passages reported.
    #[arg(value_parser = super::ranges::count(1, 10_000), long, default_value_t = 20, help_heading = "ALIGNMENT")]
    pub max_passages: usize,
    /// Align every note pair even in long works (above 4,000,000 note pairs), instead of
    /// searching from seeds: exact, but minutes for works of tens of thousands of notes.
    #[arg(long, help_heading = "ALIGNMENT")]
    pub full_search: bool,
}

impl AlignmentArgs {
    /// The library parameters.
    pub fn params(&self) -> collatio::align::AlignParams {
        collatio::align::AlignParams {
            pitch_match: self.pitch_match,
            pitch_near: self.pitch_near,
            pitch_mismatch: self.pitch_mismatch,
            interval_match: self.interval_match,
            interval_near: self.interval_near,
            interval_mismatch: self.interval_mismatch,
            rhythm_match: self.rhythm_match,
            rhythm_near: self.rhythm_near,
            rhythm_mismatch: self.rhythm_mismatch,
            metric_match: self.metric_match,
            gap_open: self.gap_open,
            gap_extend: self.gap_extend,
            fragment_penalty: self.fragment_penalty,
            max_fragments: usize::from(self.max_fragments),
            min_score: self.min_score,
            min_notes: self.min_notes,
            max_passages: self.max_passages,
            full_search: self.full_search,
        }
    }
}
