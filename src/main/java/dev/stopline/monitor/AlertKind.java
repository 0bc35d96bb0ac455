package dev.stopline.monitor;

/** The kinds of alert Stopline raises; the wire name is used in CloudEvents types and metric labels. */
public enum AlertKind {
    EFFICACY("efficacy"),
    FUTILITY("futility"),
    GUARDRAIL("guardrail"),
    SAMPLE_RATIO("sample-ratio");

    private final String wireName;

    AlertKind(String wireName) {
        this.wireName = wireName;
    }

    public String wireName() {
        return wireName;
    }

    public static AlertKind fromWireName(String name) {
        for (AlertKind k : values()) {
            if (k.wireName.equals(name)) {
                return k;
            }
        }
        throw new IllegalArgumentException("unknown alert kind " + name);
    }
}
