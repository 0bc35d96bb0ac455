package dev.stopline.stats;

/**
 * The one exception type of the statistics core: an argument broke a stated rule, or a numerical
 * procedure could not reach its tolerance within its evaluation budget. The message always states
 * the rule or the budget, so that a command-line user or an API client can act on it.
 */
public final class StatsException extends IllegalArgumentException {
    private static final long serialVersionUID = 1L;

    public StatsException(String format, Object... args) {
        super(String.format(java.util.Locale.ROOT, format, args));
    }
}
