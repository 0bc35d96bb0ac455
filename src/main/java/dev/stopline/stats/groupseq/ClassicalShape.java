package dev.stopline.stats.groupseq;

/**
 * Classical group-sequential boundary shapes, defined on the planned looks (equally spaced in the
 * original papers) by one constant C found so that the total type I error is alpha.
 * <ul>
 *   <li>{@link #POCOCK}: c_k = C_P at every look (Pocock 1977, Biometrika 64(2):191-199,
 *       doi:10.1093/biomet/64.2.191);</li>
 *   <li>{@link #OBRIEN_FLEMING}: c_k = C_B sqrt(K / k) (O'Brien &amp; Fleming 1979, Biometrics
 *       35(3):549-556, doi:10.2307/2530245). For unequally spaced looks we use the natural extension
 *       c_k = C_B / sqrt(t_k), which equals C_B sqrt(K / k) when t_k = k / K.</li>
 * </ul>
 */
public enum ClassicalShape {
    POCOCK,
    OBRIEN_FLEMING;

    /** c_k / C at information fraction t. */
    double shape(double t) {
        return this == POCOCK ? 1 : 1 / Math.sqrt(t);
    }
}
