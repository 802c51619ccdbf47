package org.lungflag.sandbox.fhirserver;

import ca.uhn.fhir.broker.api.IChannelNamer;
import ca.uhn.fhir.jpa.subscription.channel.impl.LinkedBlockingChannel;
import ca.uhn.fhir.jpa.subscription.channel.impl.LinkedBlockingChannelFactory;
import ca.uhn.fhir.jpa.subscription.channel.impl.RetryPolicyProvider;
import jakarta.annotation.PreDestroy;
import java.util.List;
import java.util.concurrent.CopyOnWriteArrayList;
import org.springframework.scheduling.concurrent.ThreadPoolTaskExecutor;

/**
 * HAPI's in-memory channel factory, plus what it lacks in 8.8.0: stopping the thread pools of the channels it made
 * (subscription matching and one per rest-hook). Without this their non-daemon threads outlive a closed server and
 * keep the JVM from exiting.
 */
final class ClosingChannelFactory extends LinkedBlockingChannelFactory {

    private final List<ThreadPoolTaskExecutor> executors = new CopyOnWriteArrayList<>();

    ClosingChannelFactory(IChannelNamer channelNamer, RetryPolicyProvider retryPolicyProvider) {
        super(channelNamer, retryPolicyProvider);
    }

    @Override
    protected LinkedBlockingChannel buildLinkedBlockingChannel(int concurrentConsumers, String channelName) {
        LinkedBlockingChannel channel = super.buildLinkedBlockingChannel(concurrentConsumers, channelName);
        if (channel.getExecutor() instanceof ThreadPoolTaskExecutor executor) {
            executors.add(executor);
        }
        return channel;
    }

    @Override
    @PreDestroy
    public void stop() {
        super.stop();
        executors.forEach(executor -> {
            // Return only when the threads are gone, so that close() leaves nothing running.
            executor.setAwaitTerminationSeconds(5);
            executor.shutdown();
        });
        executors.clear();
    }
}
