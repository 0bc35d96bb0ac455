package dev.stopline.plan;

/** The sequential test that decides the primary metric. */
public enum Method {
    /** Alpha spending at planned looks (Lan &amp; DeMets 1983), or a classical Pocock / O'Brien-Fleming boundary. */
    GROUP_SEQUENTIAL("group-sequential"),
    /** Wald's sequential probability ratio test (Wald 1947) on the normal approximation of the difference. */
    SPRT("sprt"),
    /** The mixture SPRT, an always-valid test with a normal mixing distribution (Johari et al. 2017). */
    MIXTURE_SPRT("mixture-sprt");

    private final String key;

    Method(String key) {
        this.key = key;
    }

    /** The spelling used in plan files. */
    public String key() {
        return key;
    }
}
