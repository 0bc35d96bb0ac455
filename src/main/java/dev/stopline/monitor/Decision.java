package dev.stopline.monitor;

import java.util.Locale;

/** What a look concluded. The wire name is the lower-case, hyphenated constant. */
public enum Decision {
    /** No boundary crossed: keep collecting. */
    CONTINUE,
    /** The efficacy boundary was crossed: the difference is established at the plan's alpha. */
    EFFICACY,
    /** The futility boundary was crossed: the plan's minimum effect is unlikely to be shown. */
    FUTILITY,
    /** The final look was reached without crossing: no difference shown at the plan's alpha. */
    FINAL_NO_DIFFERENCE,
    /** A guardrail metric shows harm beyond its margin. */
    GUARDRAIL_HARM,
    /** Observed units per arm do not match the planned allocation. */
    SAMPLE_RATIO_MISMATCH;

    public String wireName() {
        return name().toLowerCase(Locale.ROOT).replace('_', '-');
    }

    /** Whether this decision ends the primary analysis (no further formal looks). */
    public boolean endsPrimary() {
        return this == EFFICACY || this == FUTILITY || this == FINAL_NO_DIFFERENCE;
    }
}
