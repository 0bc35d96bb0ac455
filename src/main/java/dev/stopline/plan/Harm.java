package dev.stopline.plan;

/** The direction in which a guardrail metric does harm. */
public enum Harm {
    /** Larger is worse (page load time, error rate). */
    INCREASE("increase"),
    /** Smaller is worse (add-to-basket rate). */
    DECREASE("decrease");

    private final String key;

    Harm(String key) {
        this.key = key;
    }

    /** The spelling used in plan files. */
    public String key() {
        return key;
    }
}
