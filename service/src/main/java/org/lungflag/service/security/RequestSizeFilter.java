package org.lungflag.service.security;

import jakarta.servlet.FilterChain;
import jakarta.servlet.ReadListener;
import jakarta.servlet.ServletException;
import jakarta.servlet.ServletInputStream;
import jakarta.servlet.http.HttpServletRequest;
import jakarta.servlet.http.HttpServletRequestWrapper;
import jakarta.servlet.http.HttpServletResponse;
import java.io.BufferedReader;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import org.springframework.web.filter.OncePerRequestFilter;

/**
 * Refuses a request body larger than the limit with 413 before any controller reads it: a declared Content-Length
 * over the limit at once, a chunked body as soon as it passes the limit (it is then buffered, bounded, for the
 * controller).
 */
class RequestSizeFilter extends OncePerRequestFilter {

    private final long limit;

    RequestSizeFilter(long limit) {
        this.limit = limit;
    }

    @Override
    protected void doFilterInternal(HttpServletRequest request, HttpServletResponse response, FilterChain chain)
            throws ServletException, IOException {
        long declared = request.getContentLengthLong();
        if (declared > limit) {
            refuse(response);
            return;
        }
        if (declared >= 0 || request.getHeader("Transfer-Encoding") == null) {
            chain.doFilter(request, response);
            return;
        }
        // no declared length (chunked): read at most limit + 1 bytes
        ByteArrayOutputStream buffer = new ByteArrayOutputStream();
        try (InputStream in = request.getInputStream()) {
            byte[] chunk = new byte[8192];
            int n;
            while ((n = in.read(chunk)) >= 0) {
                buffer.write(chunk, 0, n);
                if (buffer.size() > limit) {
                    refuse(response);
                    return;
                }
            }
        }
        chain.doFilter(new Buffered(request, buffer.toByteArray()), response);
    }

    private void refuse(HttpServletResponse response) throws IOException {
        response.setStatus(HttpServletResponse.SC_REQUEST_ENTITY_TOO_LARGE);
        response.setContentType("application/json");
        response.getWriter()
                .write("{\"status\":413,\"error\":\"payload-too-large\",\"message\":\"The request body is larger than"
                        + " lungflag.security.max-api-body-bytes (" + limit + " bytes).\"}");
    }

    private static final class Buffered extends HttpServletRequestWrapper {
        private final byte[] body;

        Buffered(HttpServletRequest request, byte[] body) {
            super(request);
            this.body = body;
        }

        @Override
        public ServletInputStream getInputStream() {
            ByteArrayInputStream in = new ByteArrayInputStream(body);
            return new ServletInputStream() {
                @Override
                public int read() {
                    return in.read();
                }

                @Override
                public int read(byte[] b, int off, int len) {
                    return in.read(b, off, len);
                }

                @Override
                public boolean isFinished() {
                    return in.available() == 0;
                }

                @Override
                public boolean isReady() {
                    return true;
                }

                @Override
                public void setReadListener(ReadListener listener) {
                    throw new UnsupportedOperationException("synchronous reads only");
                }
            };
        }

        @Override
        public BufferedReader getReader() {
            String encoding = getCharacterEncoding();
            return new BufferedReader(new InputStreamReader(
                    getInputStream(),
                    encoding == null ? StandardCharsets.UTF_8 : java.nio.charset.Charset.forName(encoding)));
        }

        @Override
        public int getContentLength() {
            return body.length;
        }

        @Override
        public long getContentLengthLong() {
            return body.length;
        }
    }
}
