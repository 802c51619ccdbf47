package org.lungflag.service.replay;

import java.io.PrintStream;
import java.time.Duration;

/**
 * Progress on stderr: lines read, patients done, rate and time left. On a terminal one line is rewritten in place
 * (carriage return, at most five times a second); otherwise (a log file, a CI job) a plain line is printed every
 * {@code plainEvery}, plus one at the end of each phase.
 */
final class Progress {

    private final PrintStream err;
    private final boolean terminal;
    private final long plainEveryNanos;
    private final long start = System.nanoTime();
    private long phaseStart = start;
    private long lastPrint = 0;
    private int lastLength = 0;

    Progress(PrintStream err, boolean terminal, Duration plainEvery) {
        this.err = err;
        this.terminal = terminal;
        this.plainEveryNanos = plainEvery.toNanos();
    }

    void startPhase() {
        phaseStart = System.nanoTime();
        lastPrint = phaseStart;
    }

    /** Pass 1: {@code bytes} of {@code totalBytes} read so far. */
    void reading(long lines, long bytes, long totalBytes, long observations, boolean last) {
        double seconds = Math.max(1e-3, (System.nanoTime() - phaseStart) / 1e9);
        String left = bytes <= 0 || last ? "0s" : duration((long) (seconds * (totalBytes - bytes) / bytes));
        show(
                String.format(
                        "replay: reading  %,d lines (%d%%), %,d Observations, %,.0f lines/s, time left %s",
                        lines,
                        totalBytes == 0 ? 100 : Math.min(100, bytes * 100 / totalBytes),
                        observations,
                        lines / seconds,
                        left),
                last);
    }

    /** Pass 2: {@code done} of {@code total} patients evaluated. */
    void evaluating(long done, long total, boolean last) {
        double seconds = Math.max(1e-3, (System.nanoTime() - phaseStart) / 1e9);
        String left = done == 0 || last ? "0s" : duration((long) (seconds * (total - done) / done));
        show(
                String.format(
                        "replay: evaluating  %,d of %,d patients done, %,.1f patients/s, time left %s",
                        done, total, done / seconds, left),
                last);
    }

    void message(String text) {
        endLine();
        err.println(text);
    }

    private void show(String line, boolean last) {
        long now = System.nanoTime();
        if (terminal) {
            if (!last && now - lastPrint < 200_000_000L) {
                return;
            }
            lastPrint = now;
            String padded = line.length() < lastLength ? line + " ".repeat(lastLength - line.length()) : line;
            err.print("\r" + padded);
            lastLength = line.length();
            if (last) {
                err.println();
                lastLength = 0;
            }
            err.flush();
        } else if (last || now - lastPrint >= plainEveryNanos) {
            lastPrint = now;
            err.println(line);
        }
    }

    private void endLine() {
        if (terminal && lastLength > 0) {
            err.println();
            lastLength = 0;
        }
    }

    long elapsedMillis() {
        return (System.nanoTime() - start) / 1_000_000;
    }

    static String duration(long seconds) {
        if (seconds < 60) {
            return seconds + "s";
        }
        if (seconds < 3600) {
            return (seconds / 60) + "m" + (seconds % 60) + "s";
        }
        return (seconds / 3600) + "h" + (seconds % 3600 / 60) + "m";
    }
}
