package dev.stopline.plan;

import java.util.Collection;
import java.util.Locale;

/** "Did you mean" for unknown keys and enum values: the closest known word within a small edit distance. */
final class Suggest {
    private Suggest() {
    }

    /** The closest candidate within edit distance 2 (or equal ignoring case), else null. */
    static String closest(String word, Collection<String> candidates) {
        String best = null;
        int bestDistance = Integer.MAX_VALUE;
        String lower = word.toLowerCase(Locale.ROOT);
        for (String c : candidates) {
            int d = c.toLowerCase(Locale.ROOT).equals(lower) ? 0 : distance(word, c);
            if (d < bestDistance) {
                best = c;
                bestDistance = d;
            }
        }
        return bestDistance <= 2 && bestDistance < word.length() ? best : null;
    }

    /** " (did you mean x?)" or the empty string. */
    static String hint(String word, Collection<String> candidates) {
        String c = closest(word, candidates);
        return c == null ? "" : " (did you mean " + c + "?)";
    }

    /** Levenshtein distance, two-row dynamic programme; words here are short keys. */
    static int distance(String a, String b) {
        int[] prev = new int[b.length() + 1];
        int[] cur = new int[b.length() + 1];
        for (int j = 0; j <= b.length(); j++) {
            prev[j] = j;
        }
        for (int i = 1; i <= a.length(); i++) {
            cur[0] = i;
            for (int j = 1; j <= b.length(); j++) {
                int cost = a.charAt(i - 1) == b.charAt(j - 1) ? 0 : 1;
                cur[j] = Math.min(Math.min(cur[j - 1] + 1, prev[j] + 1), prev[j - 1] + cost);
            }
            int[] t = prev;
            prev = cur;
            cur = t;
        }
        return prev[b.length()];
    }
}
