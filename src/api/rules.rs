//! The rules that can refuse a request whose every field is valid on its own: how fields agree
//! with each other, with the data, and with this server's limits. Every refusal by a rule names
//! it in its field error (`errors[].rule`), and the OpenAPI document lists them, so that a
//! client can tell a request the schema allows but the server refuses from a request that
//! breaks the schema.

crate::wire_enum! {
    /// A rule beyond the schema that refused a field; the catalogue of rules is in the OpenAPI
    /// document.
    pub enum Rule {
        /// `target_mc_error` applies only with `"resamples": "auto"`.
        TargetNeedsAuto = "target_needs_auto",
        /// `"exact"` enumerates `iid` resamples: a scheme with continuous weights cannot be enumerated.
        ExactNeedsIid = "exact_needs_iid",
        /// `"exact"` only where the count of distinct resamples is within the server's `limits.max_resamples` (samples of up to about 10 observations).
        ExactTooMany = "exact_too_many",
        /// A block scheme reads rows in the order observed: an array or columns, not aggregated data.
        SchemeNeedsRows = "scheme_needs_rows",
        /// A block length is a whole number of rows (a mean block length any number) from 1 up to the series' length.
        BlockLength = "block_length",
        /// No studentized interval under a block scheme: a resample of blocks has no time order left to resample by blocks again for its own standard error.
        StudentizedNotByBlocks = "studentized_not_by_blocks",
        /// Labels of a stratified or cluster scheme: one per row; every stratum two rows or more; two clusters or more.
        SchemeLabels = "scheme_labels",
        /// A number of resamples at most the server's `limits.max_resamples`.
        ResampleLimit = "resample_limit",
        /// At most the server's `limits.max_rows` rows (or distinct values), and counts that add up to what it can resample.
        RowLimit = "row_limit",
        /// At most the server's `limits.max_batch_jobs` jobs in a batch.
        BatchLimit = "batch_limit",
        /// Columns of equal length, one count per value, bins with strictly increasing edges and one count per bin, and at least 2 observations in all.
        SampleShape = "sample_shape",
        /// Paired runs (`"paired": true`): baseline and candidate rows given one by one (not aggregated), the same number on both sides, pair i being the i-th row of each.
        PairedRows = "paired_rows",
        /// A statistic of one column needs an array or values with counts; a statistic of named columns needs `columns`; binned data (`bins`) gives only the statistics that can be read from bins (the message lists them).
        StatisticShape = "statistic_shape",
        /// A statistic's column parameters must name columns of the data.
        ColumnNames = "column_names",
        /// The data must be in the statistic's domain: positive values for the geometric mean, 0 and 1 for a proportion, a mean other than 0 for the coefficient of variation, no overflow for the mean of bins, a denominator that does not sum to 0, columns that are not constant, and a statistic defined on at least some resamples.
        StatisticDomain = "statistic_domain",
        /// A token stands in for the parameters it records; send one or the other.
        TokenReplacesParameters = "token_replaces_parameters",
        /// A token must be whole, issued by a server of the same format, engine version and generator, and within this server's limits.
        TokenValid = "token_valid",
    }
}
