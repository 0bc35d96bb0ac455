package dev.stopline.service.support;

import jakarta.enterprise.context.ApplicationScoped;
import jakarta.enterprise.inject.Produces;
import java.time.Clock;

/** The daemon's one clock; tests replace it with a fixed or stepping clock. */
@ApplicationScoped
public class Clocks {
    @Produces
    @ApplicationScoped
    Clock clock() {
        return Clock.systemUTC();
    }
}
