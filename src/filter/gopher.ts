// The source of the default thresholds, and the word-count range of the `rules: gopher` preset.
//
// Rae et al. 2021, "Scaling Language Models: Methods, Analysis & Insights from Training Gopher",
// arXiv:2112.11446, appendix A: the MassiveText quality filters and the repetition removal of
// table A1. Every threshold in this folder was written down from memory of that appendix and
// checked against no other source; each rule file says where siftpack departs from the paper.

/**
 * Documents with fewer than 50 or more than 100,000 words are dropped: the defaults of
 * min_words / max_words when `rules: gopher` is on (from memory of appendix A).
 */
export const GOPHER_WORDS = { min: 50, max: 100_000 } as const;
