package org.lungflag.sandbox.fhirserver;

import ca.uhn.fhir.batch2.jobs.config.Batch2JobsConfig;
import ca.uhn.fhir.broker.api.IChannelNamer;
import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.context.support.IValidationSupport;
import ca.uhn.fhir.jpa.api.IDaoRegistry;
import ca.uhn.fhir.jpa.api.config.JpaStorageSettings;
import ca.uhn.fhir.jpa.api.config.ThreadPoolFactoryConfig;
import ca.uhn.fhir.jpa.api.dao.IFhirSystemDao;
import ca.uhn.fhir.jpa.batch2.JpaBatch2Config;
import ca.uhn.fhir.jpa.config.r4.JpaR4Config;
import ca.uhn.fhir.jpa.config.util.HapiEntityManagerFactoryUtil;
import ca.uhn.fhir.jpa.config.util.ResourceCountCacheUtil;
import ca.uhn.fhir.jpa.model.config.PartitionSettings;
import ca.uhn.fhir.jpa.model.config.SubscriptionSettings;
import ca.uhn.fhir.jpa.model.dialect.HapiFhirH2Dialect;
import ca.uhn.fhir.jpa.provider.DaoRegistryResourceSupportedSvc;
import ca.uhn.fhir.jpa.provider.IJpaSystemProvider;
import ca.uhn.fhir.jpa.provider.JpaCapabilityStatementProvider;
import ca.uhn.fhir.jpa.search.DatabaseBackedPagingProvider;
import ca.uhn.fhir.jpa.search.IStaleSearchDeletingSvc;
import ca.uhn.fhir.jpa.search.StaleSearchDeletingSvcImpl;
import ca.uhn.fhir.jpa.subscription.channel.config.SubscriptionChannelConfig;
import ca.uhn.fhir.jpa.subscription.channel.impl.LinkedBlockingChannelFactory;
import ca.uhn.fhir.jpa.subscription.channel.impl.RetryPolicyProvider;
import ca.uhn.fhir.jpa.subscription.match.config.SubscriptionProcessorConfig;
import ca.uhn.fhir.jpa.subscription.match.deliver.email.IEmailSender;
import ca.uhn.fhir.jpa.subscription.submit.config.SubscriptionSubmitterConfig;
import ca.uhn.fhir.jpa.util.ResourceCountCache;
import ca.uhn.fhir.rest.api.EncodingEnum;
import ca.uhn.fhir.rest.api.IResourceSupportedSvc;
import ca.uhn.fhir.rest.server.RestfulServer;
import ca.uhn.fhir.rest.server.provider.ResourceProviderFactory;
import ca.uhn.fhir.rest.server.util.ISearchParamRegistry;
import jakarta.persistence.EntityManagerFactory;
import java.util.Map;
import javax.sql.DataSource;
import org.hl7.fhir.dstu2.model.Subscription.SubscriptionChannelType;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.beans.factory.config.ConfigurableListableBeanFactory;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;
import org.springframework.context.annotation.Import;
import org.springframework.context.annotation.Primary;
import org.springframework.orm.jpa.JpaTransactionManager;
import org.springframework.orm.jpa.LocalContainerEntityManagerFactoryBean;

/**
 * The beans HAPI's JPA server needs beyond its own configuration classes: storage and subscription settings, the entity
 * manager and the REST servlet. Lives in its own plain Spring context (no Boot auto-configuration), never in the
 * advisory service's. {@link SandboxFhirServer} supplies the {@link SandboxOptions} and the H2 {@link DataSource}.
 */
@Configuration
@Import({
    JpaR4Config.class,
    ThreadPoolFactoryConfig.class,
    SubscriptionSubmitterConfig.class,
    SubscriptionProcessorConfig.class,
    SubscriptionChannelConfig.class,
    JpaBatch2Config.class,
    Batch2JobsConfig.class
})
class FhirServerConfig {

    private static final Logger log = LoggerFactory.getLogger(FhirServerConfig.class);

    @Bean
    JpaStorageSettings storageSettings() {
        JpaStorageSettings settings = new JpaStorageSettings();
        // A search right after a write must see it: never answer from a cached earlier search.
        settings.setReuseCachedSearchResultsForMillis(null);
        // Background work a sandbox never needs: their scheduled jobs then return at once. (Without the legacy
        // reindexing, a SearchParameter added later applies to resources written after it.)
        settings.setEnableTaskBulkImportJobExecution(false);
        settings.setEnableTaskBulkExportJobExecution(false);
        settings.setEnableTaskPreExpandValueSets(false);
        settings.setEnableTaskResourceReindexing(false);
        return settings;
    }

    /**
     * Keep the versions of references as written (HAPI strips them by default when it stores a resource): Lungflag
     * writes Provenance and Flags that point at the exact Observation versions they were derived from. A site's
     * FHIR server needs the same (design invariant 5).
     */
    @Bean
    Object keepVersionedReferences(FhirContext fhirContext) {
        fhirContext.getParserOptions().setStripVersionsFromReferences(false);
        return new Object();
    }

    @Bean
    SubscriptionSettings subscriptionSettings(SandboxOptions options) {

        SubscriptionSettings settings = new SubscriptionSettings();
        // Without a supported type every Subscription stays "requested".
        settings.addSupportedSubscriptionType(SubscriptionChannelType.RESTHOOK);
        // Every change, Subscriptions included, reaches the matcher within one interval after it commits.
        settings.setSubscriptionIntervalInMs(options.subscriptionInterval().toMillis());
        // Not "queued immediately": HAPI 8.8 then submits a Subscription change before its transaction commits, the
        // registry reads the old version back, and a deleted or switched-off Subscription keeps delivering until
        // the registry's once-a-minute resync. With a 500 ms interval the queued path activates in under a second.
        settings.setSubscriptionChangeQueuedImmediately(false);
        return settings;
    }

    /** Replaces HAPI's own (the broker client takes the primary one) so that closing stops the channel threads. */
    @Bean
    @Primary
    LinkedBlockingChannelFactory closingChannelFactory(
            IChannelNamer channelNamer, RetryPolicyProvider retryPolicyProvider) {
        return new ClosingChannelFactory(channelNamer, retryPolicyProvider);
    }

    @Bean
    PartitionSettings partitionSettings() {
        return new PartitionSettings();
    }

    /** Only rest-hook channels are supported, so no e-mail is ever due; say so if HAPI asks anyway. */
    @Bean
    IEmailSender emailSender() {
        return details -> log.warn(
                "The sandbox FHIR server sends no e-mail; dropped one for subscription {}",
                details.getSubscriptionId());
    }

    @Bean
    IStaleSearchDeletingSvc staleSearchDeletingSvc() {
        return new StaleSearchDeletingSvcImpl();
    }

    @Bean
    DatabaseBackedPagingProvider databaseBackedPagingProvider() {
        return new DatabaseBackedPagingProvider();
    }

    @Bean
    IResourceSupportedSvc resourceSupportedSvc(IDaoRegistry daoRegistry) {
        return new DaoRegistryResourceSupportedSvc(daoRegistry);
    }

    /** HAPI looks this cache up by name. */
    @Bean(name = "myResourceCountsCache")
    ResourceCountCache resourceCountsCache(IFhirSystemDao<?, ?> systemDao) {
        return ResourceCountCacheUtil.newResourceCountCache(systemDao);
    }

    @Bean
    LocalContainerEntityManagerFactoryBean entityManagerFactory(
            ConfigurableListableBeanFactory beanFactory,
            FhirContext fhirContext,
            JpaStorageSettings storageSettings,
            DataSource dataSource) {
        LocalContainerEntityManagerFactoryBean factory =
                HapiEntityManagerFactoryUtil.newEntityManagerFactory(beanFactory, fhirContext, storageSettings);
        factory.setPersistenceUnitName("lungflag-sandbox");
        factory.setDataSource(dataSource);
        factory.getJpaPropertyMap()
                .putAll(Map.of(
                        "hibernate.dialect", HapiFhirH2Dialect.class.getName(),
                        // Creates the schema in a new database and leaves an existing one as it is.
                        "hibernate.hbm2ddl.auto", "update",
                        "hibernate.search.enabled", "false",
                        // Envers only audits MDM links, which the sandbox does not use.
                        "hibernate.integration.envers.enabled", "false",
                        "hibernate.jdbc.batch_size", "20",
                        "hibernate.cache.use_query_cache", "false",
                        "hibernate.cache.use_second_level_cache", "false",
                        "hibernate.show_sql", "false",
                        "hibernate.format_sql", "false"));
        return factory;
    }

    @Bean
    JpaTransactionManager transactionManager(EntityManagerFactory entityManagerFactory) {
        return new JpaTransactionManager(entityManagerFactory);
    }

    @Bean
    RestfulServer restfulServer(
            FhirContext fhirContext,
            ResourceProviderFactory resourceProviders,
            IJpaSystemProvider systemProvider,
            DatabaseBackedPagingProvider pagingProvider,
            IFhirSystemDao<?, ?> systemDao,
            JpaStorageSettings storageSettings,
            ISearchParamRegistry searchParamRegistry,
            IValidationSupport validationSupport) {
        RestfulServer server = new RestfulServer(fhirContext);
        server.setServerName("Lungflag sandbox FHIR server");
        server.setImplementationDescription("HAPI FHIR JPA server (H2) for the Lungflag demo and end-to-end tests");
        server.registerProviders(resourceProviders.createProviders());
        server.registerProvider(systemProvider);
        server.setPagingProvider(pagingProvider);
        server.setDefaultResponseEncoding(EncodingEnum.JSON);
        // The default provider walks every method binding once per resource type: 30 s for the first /metadata,
        // longer than a client's read timeout. The JPA one reads the search parameter registry instead.
        server.setServerConformanceProvider(new JpaCapabilityStatementProvider(
                server, systemDao, storageSettings, searchParamRegistry, validationSupport));
        return server;
    }
}
