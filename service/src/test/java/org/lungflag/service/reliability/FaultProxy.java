package org.lungflag.service.reliability;

import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.net.InetAddress;
import java.net.InetSocketAddress;
import java.net.ServerSocket;
import java.net.Socket;
import java.net.SocketException;
import java.time.Duration;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicLong;

/**
 * A TCP proxy on the loopback address for fault tests: it forwards bytes to a target (the embedded FHIR server, or
 * PostgreSQL) and can be switched off (the port refuses connections and open connections are cut, as when a server
 * or the network goes away), switched on again on the same port, or slowed down (a delay before each request a
 * client sends after the previous answer, i.e. about once per HTTP request or SQL round trip).
 */
final class FaultProxy implements AutoCloseable {

    private final InetSocketAddress target;
    private final int port;
    private final Set<Socket> open = ConcurrentHashMap.newKeySet();
    private final ExecutorService pool = Executors.newCachedThreadPool(r -> {
        Thread t = new Thread(r, "fault-proxy");
        t.setDaemon(true);
        return t;
    });
    private final AtomicLong delayMillis = new AtomicLong();
    private final AtomicLong connections = new AtomicLong();
    private volatile ServerSocket listener;

    FaultProxy(String host, int targetPort) {
        this.target = new InetSocketAddress(host, targetPort);
        this.listener = bind(0);
        this.port = listener.getLocalPort();
        accept(listener);
    }

    int port() {
        return port;
    }

    /** Connections accepted so far. */
    long connections() {
        return connections.get();
    }

    /** Stops listening and cuts every open connection: clients see a refused connection or a reset. */
    synchronized void stop() {
        ServerSocket l = listener;
        listener = null;
        if (l != null) {
            closeQuietly(l);
        }
        for (Socket s : open) {
            closeQuietly(s);
        }
        open.clear();
    }

    /** Listens again on the same port. */
    synchronized void start() {
        if (listener == null) {
            listener = bind(port);
            accept(listener);
        }
    }

    /** Delays each request a client sends (zero: no delay). */
    void delay(Duration delay) {
        delayMillis.set(delay.toMillis());
    }

    private static ServerSocket bind(int port) {
        try {
            ServerSocket s = new ServerSocket();
            s.setReuseAddress(true);
            s.bind(new InetSocketAddress(InetAddress.getLoopbackAddress(), port), 100);
            return s;
        } catch (IOException e) {
            throw new UncheckedIOException("cannot listen on port " + port, e);
        }
    }

    private void accept(ServerSocket l) {
        pool.execute(() -> {
            while (!l.isClosed()) {
                Socket client;
                try {
                    client = l.accept();
                } catch (IOException e) {
                    return; // stopped
                }
                connections.incrementAndGet();
                pool.execute(() -> connect(client));
            }
        });
    }

    private void connect(Socket client) {
        Socket upstream = new Socket();
        try {
            upstream.connect(target, 5000);
        } catch (IOException e) {
            closeQuietly(client);
            closeQuietly(upstream);
            return;
        }
        open.add(client);
        open.add(upstream);
        if (listener == null) { // stopped while connecting
            closeQuietly(client);
            closeQuietly(upstream);
            return;
        }
        AtomicBoolean answered = new AtomicBoolean(true);
        pool.execute(() -> pump(client, upstream, answered, true));
        pool.execute(() -> pump(upstream, client, answered, false));
    }

    private void pump(Socket from, Socket to, AtomicBoolean answered, boolean request) {
        byte[] buffer = new byte[16384];
        try (InputStream in = from.getInputStream();
                OutputStream out = to.getOutputStream()) {
            int n;
            while ((n = in.read(buffer)) >= 0) {
                if (request) {
                    long delay = delayMillis.get();
                    if (delay > 0 && answered.getAndSet(false)) {
                        Thread.sleep(delay);
                    }
                } else {
                    answered.set(true);
                }
                out.write(buffer, 0, n);
                out.flush();
            }
        } catch (IOException | InterruptedException e) {
            // cut, or the other side closed
        } finally {
            closeQuietly(from);
            closeQuietly(to);
            open.remove(from);
            open.remove(to);
        }
    }

    private static void closeQuietly(AutoCloseable c) {
        try {
            if (c instanceof Socket s && !s.isClosed()) {
                try {
                    s.setSoLinger(true, 0); // a reset, like a server that went away
                } catch (SocketException ignored) {
                    // already closed
                }
            }
            c.close();
        } catch (Exception ignored) {
            // best effort
        }
    }

    @Override
    public void close() {
        stop();
        pool.shutdownNow();
    }
}
