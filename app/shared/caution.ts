/** The caution every results screen, export and API answer carries. */
export const CAUTION = "Results support, but do not replace, qualified statistical and medical review.";
