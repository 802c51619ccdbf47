package org.lungflag.sandbox.fhirserver;

import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.IOException;
import java.net.InetAddress;
import java.net.ServerSocket;
import org.junit.jupiter.api.Test;

/** Start-up refusals that must come with a sentence saying what to do. */
class SandboxFhirServerStartTest {

    @Test
    void takenPortIsRefusedWithWhatToDo() throws IOException {
        try (ServerSocket taken = new ServerSocket(0, 1, InetAddress.getLoopbackAddress())) {
            int port = taken.getLocalPort();

            assertThatThrownBy(() ->
                            SandboxFhirServer.start(SandboxOptions.inMemory().withPort(port)))
                    .isInstanceOf(IllegalStateException.class)
                    .hasMessage("Port " + port + " on 127.0.0.1 is in use; choose another port (0 picks a free one)");
        }
    }
}
