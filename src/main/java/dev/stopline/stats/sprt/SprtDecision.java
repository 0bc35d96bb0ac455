package dev.stopline.stats.sprt;

/** The outcome of one look of a sequential probability ratio test. */
public enum SprtDecision {
    /** The log-likelihood ratio reached the upper threshold: stop, accept the alternative. */
    ACCEPT_H1,
    /** The log-likelihood ratio reached the lower threshold: stop, accept the null. */
    ACCEPT_H0,
    /** Neither threshold reached: keep collecting. */
    CONTINUE
}
