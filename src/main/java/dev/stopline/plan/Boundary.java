package dev.stopline.plan;

/** Classical group-sequential boundaries, defined only for equally spaced looks. */
public enum Boundary {
    /** Constant nominal level at every look (Pocock 1977). */
    POCOCK("pocock"),
    /** Boundary proportional to 1/sqrt(information fraction) (O'Brien &amp; Fleming 1979). */
    OBRIEN_FLEMING("obrien-fleming");

    private final String key;

    Boundary(String key) {
        this.key = key;
    }

    /** The spelling used in plan files. */
    public String key() {
        return key;
    }
}
