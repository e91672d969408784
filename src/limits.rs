//! The bounds on what one run may be asked to do and to read, in one place, so that no
//! input or setting can make the process panic, abort or be killed for memory: each is
//! checked before the work or the allocation it bounds, and each refusal says what was
//! asked, what the bound is and what to do instead. The values are documented in
//! docs/limits.md; they are choices of this project (common practice, no source), set
//! well above what a coding sheet, an item file or an interval needs.

/// Monte Carlo draws (or bootstrap samples) of a correction. A million draws give a
/// percentile interval whose ends are stable to the third decimal; more only cost memory.
pub const MAX_DRAWS: usize = 1_000_000;

/// Memory the draws of one correction may hold (each draw keeps one number per
/// predictor and one for the outcome).
pub const MAX_DRAW_BYTES: usize = 512 << 20;

/// Points per reliability in a sensitivity table (a correlation's table has the square
/// of this many cells).
pub const MAX_GRID: usize = 101;

/// Permutations of a permutation test.
pub const MAX_PERMUTATIONS: usize = 1_000_000;

/// Bootstrap replicates of omega's interval (each is a factor fit).
pub const MAX_BOOTSTRAP: usize = 100_000;

/// Levels of one categorical moderator or of the column a benchmark is given per level.
/// A model with more levels than this has more coefficients than a coding sheet can
/// inform; the design's cost grows with the cube of the levels.
pub const MAX_LEVELS: usize = 200;

/// Rows of one cluster in a multilevel fit: each cluster's covariance matrix is inverted
/// at every step, at a cost that grows with the cube of its rows.
pub const MAX_CLUSTER_ROWS: usize = 2_000;

/// Items a one-factor model is fitted to; alpha and the item statistics are still
/// computed above it.
pub const MAX_FACTOR_ITEMS: usize = 1_000;

/// Items the bifactor and correlated-factors models are fitted to (each evaluation of their
/// likelihood costs O(k³)).
pub const MAX_STRUCTURE_ITEMS: usize = 200;

/// Items the greatest lower bound is computed for (each Newton step of its search costs
/// O(k³)).
pub const MAX_GLB_ITEMS: usize = 100;

/// Columns of an item file (or of --data) read at all.
pub const MAX_COLUMNS: usize = 20_000;

/// Bytes of one line of a text file. Longer lines (or a file with no line breaks, such
/// as a device that never ends) are refused before they are held in memory.
pub const MAX_LINE_BYTES: usize = 16 << 20;

/// Bytes of a coding sheet or a workbook file read into memory.
pub const MAX_FILE_BYTES: u64 = 1 << 30;

/// Bytes a workbook may expand to when its parts are decompressed (by default; an
/// option raises it).
pub const DEFAULT_WORKBOOK_BYTES: u64 = 256 << 20;

/// Cells with content a worksheet may hold (by default; an option raises it).
pub const DEFAULT_WORKBOOK_CELLS: u64 = 10_000_000;

/// The last row and column of a worksheet as spreadsheet programs number them (the
/// format's own bounds).
pub const SHEET_ROWS: u32 = 1_048_576;
/// See [`SHEET_ROWS`].
pub const SHEET_COLUMNS: u32 = 16_384;
