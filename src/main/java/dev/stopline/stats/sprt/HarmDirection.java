package dev.stopline.stats.sprt;

/** Which direction of the treatment-minus-control difference harms a guardrail metric. */
public enum HarmDirection {
    /** An increase is harmful (page load time, error rate, refunds). */
    INCREASE(1),
    /** A decrease is harmful (conversion, revenue per visitor). */
    DECREASE(-1);

    private final int sign;

    HarmDirection(int sign) {
        this.sign = sign;
    }

    /** The harm {@code +difference} or {@code -difference}. */
    public double harm(double difference) {
        return sign * difference;
    }

    /** +1 or -1. */
    public int sign() {
        return sign;
    }
}
