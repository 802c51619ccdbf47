package org.lungflag.service;

import org.springframework.boot.SpringApplication;
import org.springframework.boot.autoconfigure.SpringBootApplication;
import org.springframework.boot.context.properties.ConfigurationPropertiesScan;
import org.springframework.scheduling.annotation.EnableScheduling;

/**
 * The Lungflag service. {@code java -jar lungflag-service.jar} runs the live service; {@code java -jar
 * lungflag-service.jar replay ...} runs the offline replay with the same pipeline.
 */
@SpringBootApplication(
        excludeName = {
            // The service talks to its audit store with plain JDBC; HAPI's JPA classes may be on a test classpath.
            "org.springframework.boot.autoconfigure.orm.jpa.HibernateJpaAutoConfiguration",
            "org.springframework.boot.autoconfigure.data.jpa.JpaRepositoriesAutoConfiguration",
            "org.springframework.boot.autoconfigure.quartz.QuartzAutoConfiguration",
            "org.springframework.boot.autoconfigure.batch.BatchAutoConfiguration",
            "org.springframework.boot.autoconfigure.elasticsearch.ElasticsearchClientAutoConfiguration",
            "org.springframework.boot.autoconfigure.elasticsearch.ElasticsearchRestClientAutoConfiguration",
            // The bus intake builds its own consumer from lungflag.intake.bus.* only when enabled.
            "org.springframework.boot.autoconfigure.kafka.KafkaAutoConfiguration"
        })
@ConfigurationPropertiesScan
@EnableScheduling
public class LungflagApplication {

    public static void main(String[] args) {
        if (args.length > 0 && args[0].equals("replay")) {
            // the offline replay: no Spring context, no web server, no database
            org.lungflag.service.replay.ReplayCommand.main(java.util.Arrays.copyOfRange(args, 1, args.length));
            return;
        }
        SpringApplication.run(LungflagApplication.class, args);
    }
}
