package org.lungflag.service.intake;

import java.time.Duration;
import java.util.concurrent.Semaphore;
import java.util.concurrent.TimeUnit;
import org.springframework.stereotype.Component;

/**
 * Wakes the inbox processor as soon as something was recorded, so latency does not depend on the polling interval.
 * Polling still runs: another instance may have recorded the row.
 */
@Component
public class InboxSignal {

    private final Semaphore permits = new Semaphore(0);

    /** Called after a row was committed. */
    public void recorded() {
        if (permits.availablePermits() == 0) {
            permits.release();
        }
    }

    /** Waits until something was recorded or the timeout passed. Returns true when woken by a recording. */
    public boolean await(Duration timeout) throws InterruptedException {
        boolean woken = permits.tryAcquire(timeout.toMillis(), TimeUnit.MILLISECONDS);
        permits.drainPermits();
        return woken;
    }
}
