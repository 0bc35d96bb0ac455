package dev.stopline.stats.sprt;

/**
 * A closed interval {@code [lower, upper]}; a one-sided bound has an infinite end. Empty when
 * {@code lower > upper} (possible for a running intersection of confidence sequences).
 *
 * @param lower lower end
 * @param upper upper end
 */
public record Interval(double lower, double upper) {
    /** The whole line, the confidence set before the first look. */
    public static final Interval ALL = new Interval(Double.NEGATIVE_INFINITY, Double.POSITIVE_INFINITY);

    public boolean contains(double x) {
        return lower <= x && x <= upper;
    }

    public boolean isEmpty() {
        return lower > upper;
    }

    /** The intersection (may be empty). */
    public Interval intersect(Interval other) {
        return new Interval(Math.max(lower, other.lower), Math.min(upper, other.upper));
    }
}
