package org.lungflag.service.intake;

import ca.uhn.fhir.context.FhirContext;
import org.lungflag.service.audit.QuarantineRepository;
import org.springframework.boot.web.servlet.FilterRegistrationBean;
import org.springframework.boot.web.servlet.ServletRegistrationBean;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;
import org.springframework.core.Ordered;

@Configuration(proxyBeanMethods = false)
class IntakeConfiguration {

    /** The rest-hook as a servlet of its own, ready at start-up (see {@link HookServlet} for why not Spring MVC). */
    @Bean
    ServletRegistrationBean<HookServlet> hookServlet(
            FhirContext fhirContext,
            InboxRepository inbox,
            InboxGroupWriter groupWriter,
            InboxSignal signal,
            QuarantineRepository quarantine,
            IntakeProperties properties,
            CatchUpSearch catchUp) {
        ServletRegistrationBean<HookServlet> registration = new ServletRegistrationBean<>(
                new HookServlet(fhirContext, inbox, groupWriter, signal, quarantine, properties, catchUp),
                HookServlet.URL_MAPPING);
        registration.setName(HookServlet.SERVLET_NAME);
        registration.setLoadOnStartup(1);
        return registration;
    }

    /**
     * The hook's token check, mapped to the hook servlet itself (so every request the container routes to it is
     * checked, whatever its path looks like), before anything else reads the request.
     */
    @Bean
    FilterRegistrationBean<HookAuthenticationFilter> hookAuthenticationFilter(
            HookToken token, ServletRegistrationBean<HookServlet> hookServlet) {
        FilterRegistrationBean<HookAuthenticationFilter> registration =
                new FilterRegistrationBean<>(new HookAuthenticationFilter(token), hookServlet);
        registration.setOrder(Ordered.HIGHEST_PRECEDENCE + 10);
        return registration;
    }
}
