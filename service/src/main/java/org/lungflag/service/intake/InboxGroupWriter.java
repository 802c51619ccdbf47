package org.lungflag.service.intake;

import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.LinkedBlockingQueue;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.TimeoutException;
import java.util.concurrent.atomic.AtomicLong;
import org.lungflag.service.intake.InboxRepository.NewRow;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.context.SmartLifecycle;
import org.springframework.dao.DataAccessResourceFailureException;
import org.springframework.dao.RecoverableDataAccessException;
import org.springframework.dao.TransientDataAccessException;
import org.springframework.dao.TransientDataAccessResourceException;
import org.springframework.stereotype.Component;
import org.springframework.transaction.PlatformTransactionManager;
import org.springframework.transaction.TransactionException;
import org.springframework.transaction.support.TransactionTemplate;

/**
 * Group commit for the rest-hook. Every notification must be committed to the inbox before it is acknowledged, and
 * one commit per notification made the commit the hook's largest cost under load (on PostgreSQL each is a write-ahead
 * log flush). Hook threads hand their row to this writer and wait; its one thread records whatever rows are waiting
 * (up to {@code lungflag.intake.group-commit-max-rows}) in one transaction and then releases each caller with the
 * outcome. A caller is released only after the transaction holding its row committed, so an acknowledgement still
 * means "recorded".
 *
 * <p>When the database is away the whole group fails at once and every caller answers 503. Any other failure of a
 * group is retried row by row, so a row the database refuses for a reason of its own fails only its own caller.
 */
@Component
class InboxGroupWriter implements SmartLifecycle {

    private static final Logger log = LoggerFactory.getLogger(InboxGroupWriter.class);

    /**
     * How long a caller waits for its row's outcome before answering 503 (the FHIR server retries; the inbox dedups
     * a row that was committed after all). Longer than a connection wait of the pool, so a slow database answers
     * through its own exception first.
     */
    static final long WAIT_SECONDS = 60;

    private final InboxRepository inbox;
    private final TransactionTemplate tx;
    private final int maxRows;
    private final LinkedBlockingQueue<Pending> queue = new LinkedBlockingQueue<>();
    private final AtomicLong groups = new AtomicLong();
    private volatile boolean running;
    private Thread thread;

    private record Pending(NewRow row, CompletableFuture<Void> done) {}

    InboxGroupWriter(InboxRepository inbox, PlatformTransactionManager transactions, IntakeProperties properties) {
        this.inbox = inbox;
        this.tx = new TransactionTemplate(transactions);
        this.maxRows = Math.max(1, properties.groupCommitMaxRows());
    }

    /**
     * Records one row and returns once it is committed; throws what its transaction threw (a {@link
     * org.springframework.dao.DataAccessException} or {@link TransactionException} when the database is away).
     */
    void add(NewRow row) {
        if (!running || maxRows == 1) {
            writeAlone(row);
            return;
        }
        Pending pending = new Pending(row, new CompletableFuture<>());
        queue.add(pending);
        if (!running && queue.remove(pending)) {
            // stopped between the check and the hand-over: the writer may be gone, so record it here
            writeAlone(row);
            return;
        }
        try {
            pending.done().get(WAIT_SECONDS, TimeUnit.SECONDS);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new TransientDataAccessResourceException("interrupted while the notification was being recorded", e);
        } catch (TimeoutException e) {
            throw new TransientDataAccessResourceException(
                    "the notification was not recorded within " + WAIT_SECONDS + " s", e);
        } catch (ExecutionException e) {
            Throwable cause = e.getCause();
            if (cause instanceof RuntimeException re) {
                throw re;
            }
            if (cause instanceof Error err) {
                throw err;
            }
            throw new IllegalStateException(cause);
        }
    }

    private void loop() {
        List<Pending> group = new ArrayList<>(maxRows);
        while (running || !queue.isEmpty()) {
            try {
                Pending first = queue.poll(200, TimeUnit.MILLISECONDS);
                if (first == null) {
                    continue;
                }
                group.clear();
                group.add(first);
                queue.drainTo(group, maxRows - 1);
                write(group);
            } catch (InterruptedException e) {
                // nothing here interrupts this thread on purpose (stop() lets it drain and end): ending on a stray
                // interrupt would leave every caller waiting for its timeout, so go on
                continue;
            } catch (RuntimeException | Error e) {
                // write() completes every caller itself; this is only a last guard for the thread
                log.error("inbox group writer round failed ({})", e.getClass().getSimpleName(), e);
                group.forEach(p -> p.done().completeExceptionally(e));
            }
        }
    }

    private void write(List<Pending> group) {
        List<NewRow> rows = new ArrayList<>(group.size());
        group.forEach(p -> rows.add(p.row()));
        try {
            tx.executeWithoutResult(s -> inbox.addAll(rows));
            groups.incrementAndGet();
            group.forEach(p -> p.done().complete(null));
        } catch (RuntimeException e) {
            if (group.size() == 1 || databaseAway(e)) {
                group.forEach(p -> p.done().completeExceptionally(e));
                return;
            }
            log.debug("a group of {} inbox rows failed; recording them one by one", group.size(), e);
            for (Pending p : group) {
                try {
                    writeAlone(p.row());
                    p.done().complete(null);
                } catch (RuntimeException one) {
                    p.done().completeExceptionally(one);
                }
            }
        }
    }

    /** One row in a transaction of its own. */
    private void writeAlone(NewRow row) {
        tx.executeWithoutResult(s -> inbox.addAll(List.of(row)));
    }

    /** Rows handed over and not yet taken up by the writer. */
    int waiting() {
        return queue.size();
    }

    /** Groups committed whole since start-up (the rows of a group retried one by one are not counted). */
    long groupsCommitted() {
        return groups.get();
    }

    /** The database could not be reached or refused for a while: row by row would only fail as many times. */
    static boolean databaseAway(RuntimeException e) {
        return e instanceof TransactionException
                || e instanceof DataAccessResourceFailureException
                || e instanceof TransientDataAccessException
                || e instanceof RecoverableDataAccessException;
    }

    @Override
    public void start() {
        running = true;
        thread = new Thread(this::loop, "lungflag-inbox-writer");
        thread.setDaemon(true);
        thread.start();
    }

    @Override
    public void stop() {
        running = false;
        Thread t = thread;
        if (t != null) {
            try {
                t.join(TimeUnit.SECONDS.toMillis(WAIT_SECONDS));
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
        }
    }

    @Override
    public boolean isRunning() {
        return running;
    }

    /** Started before the web server takes requests and stopped after it stops taking them. */
    @Override
    public int getPhase() {
        return Integer.MIN_VALUE + 1000;
    }
}
