package dev.stopline.plan;

/**
 * The mixture SPRT with a normal mixing distribution N(0, tau^2) on the difference of arm means
 * (Johari et al. 2017): tau should be of the order of the effects one expects.
 *
 * @param tau mixing standard deviation on the difference scale, &gt; 0
 */
public record MixtureSprt(Double tau) {
}
