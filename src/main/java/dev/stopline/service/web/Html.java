package dev.stopline.service.web;

import java.time.Instant;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.Locale;

/**
 * Escaping and number formatting shared by the status pages and the chart. Every piece of text that
 * comes from a plan, a snapshot or the database goes through {@link #esc}: the pages are rendered
 * without a template engine, so this is the one place that keeps hostile names inert.
 */
final class Html {
    private static final DateTimeFormatter TIME = DateTimeFormatter.ofPattern("yyyy-MM-dd HH:mm:ss 'UTC'",
            Locale.ROOT).withZone(ZoneOffset.UTC);
    private static final DateTimeFormatter MINUTE = DateTimeFormatter.ofPattern("yyyy-MM-dd HH:mm 'UTC'",
            Locale.ROOT).withZone(ZoneOffset.UTC);

    private Html() {
    }

    /** Text or attribute value with {@code & < > " '} replaced by entities; null becomes the empty string. */
    static String esc(String s) {
        if (s == null) {
            return "";
        }
        StringBuilder b = new StringBuilder(s.length() + 16);
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            switch (c) {
                case '&' -> b.append("&amp;");
                case '<' -> b.append("&lt;");
                case '>' -> b.append("&gt;");
                case '"' -> b.append("&quot;");
                case '\'' -> b.append("&#39;");
                default -> b.append(c);
            }
        }
        return b.toString();
    }

    /** Fixed decimals, or an en dash for a missing or non-finite value. */
    static String fixed(Double x, int decimals) {
        if (x == null || !Double.isFinite(x)) {
            return x != null && x.isInfinite() ? (x > 0 ? "+\u221e" : "\u2212\u221e") : "\u2013";
        }
        return String.format(Locale.ROOT, "%." + decimals + "f", x);
    }

    /**
     * A probability (alpha spent, p-value): 4 decimals from 0.0001 up, otherwise 2 significant digits
     * in scientific notation, so that the tiny early spending of an O'Brien-Fleming-type plan stays visible.
     */
    static String prob(Double p) {
        if (p == null || !Double.isFinite(p)) {
            return "\u2013";
        }
        if (p == 0 || p >= 1e-4) {
            return String.format(Locale.ROOT, "%.4f", p);
        }
        return String.format(Locale.ROOT, "%.1e", p);
    }

    /** Full precision, for {@code data-value} attributes that tests and scripts can read back exactly. */
    static String raw(Double x) {
        return x == null ? "" : Double.toString(x);
    }

    /** To the minute, for tight places. */
    static String minute(Instant t) {
        return t == null ? "\u2013" : MINUTE.format(t);
    }

    static String time(Instant t) {
        return t == null ? "\u2013" : TIME.format(t);
    }
}
