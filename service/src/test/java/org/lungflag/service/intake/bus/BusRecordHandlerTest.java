package org.lungflag.service.intake.bus;

import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.mockito.ArgumentMatchers.any;
import static org.mockito.ArgumentMatchers.anyString;
import static org.mockito.Mockito.mock;
import static org.mockito.Mockito.never;
import static org.mockito.Mockito.verify;
import static org.mockito.Mockito.when;

import ca.uhn.fhir.context.FhirContext;
import io.micrometer.core.instrument.simple.SimpleMeterRegistry;
import java.util.List;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.ReceivedResourceRepository;
import org.lungflag.service.intake.InboxChannel;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.intake.InboxSignal;
import org.springframework.dao.DataAccessResourceFailureException;
import org.springframework.transaction.PlatformTransactionManager;
import org.springframework.transaction.support.TransactionTemplate;

/**
 * Offsets are committed only after the handler returns (ack mode BATCH), so a poll the database refused must make
 * it throw: the container then keeps the offsets and records the poll again.
 */
class BusRecordHandlerTest {

    @Test
    void aPollTheDatabaseRefusesThrowsSoItsOffsetsAreNotCommitted() {
        InboxRepository inbox = mock(InboxRepository.class);
        ReceivedResourceRepository received = mock(ReceivedResourceRepository.class);
        InboxSignal signal = mock(InboxSignal.class);
        when(inbox.add(anyString(), anyString(), anyString(), any(InboxChannel.class), anyString()))
                .thenThrow(new DataAccessResourceFailureException("the audit database is down"));
        BusRecordHandler handler = new BusRecordHandler(
                FhirContext.forR4Cached(),
                inbox,
                signal,
                mock(QuarantineRepository.class),
                received,
                new TransactionTemplate(mock(PlatformTransactionManager.class)),
                new SimpleMeterRegistry());
        String observation = """
                {"resourceType":"Observation","id":"o-1","meta":{"versionId":"3"},"status":"final",
                 "code":{"coding":[{"system":"http://loinc.org","code":"2703-7"}]},
                 "subject":{"reference":"Patient/p-1"}}""";

        assertThatThrownBy(() -> handler.onMessage(List.of(new ConsumerRecord<>("t", 0, 7L, "p-1", observation))))
                .isInstanceOf(DataAccessResourceFailureException.class);
        verify(inbox).add("Observation", "o-1", "3", InboxChannel.BUS, observation);
        verify(signal, never()).recorded();
    }
}
