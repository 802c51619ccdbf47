package org.lungflag.service.testsupport;

import java.util.concurrent.TimeUnit;
import org.lungflag.service.intake.CatchUpSearch;
import org.springframework.context.ConfigurableApplicationContext;

/**
 * The service searches once at start-up for what it may have missed. Records a test creates on the server before that
 * search has run would be queued by it as well as delivered by the test, so tests (and the load benchmark) start after
 * it. Kept apart from the reliability {@code Harness}, whose class start-up boots the shared embedded FHIR server.
 */
public final class FirstCatchUp {

    private FirstCatchUp() {}

    public static void await(ConfigurableApplicationContext context) {
        CatchUpSearch catchUp = context.getBean(CatchUpSearch.class);
        long deadline = System.nanoTime() + TimeUnit.MINUTES.toNanos(2);
        while (catchUp.status().lastAttemptAt() == null) {
            if (System.nanoTime() > deadline) {
                throw new IllegalStateException("the first catch-up search did not run within 2 minutes");
            }
            try {
                Thread.sleep(100);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
                throw new IllegalStateException(e);
            }
        }
    }
}
