package org.lungflag.service.intake;

import org.springframework.boot.web.servlet.FilterRegistrationBean;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;
import org.springframework.core.Ordered;

@Configuration(proxyBeanMethods = false)
class IntakeConfiguration {

    /** The hook's token check runs before anything else reads the request. */
    @Bean
    FilterRegistrationBean<HookAuthenticationFilter> hookAuthenticationFilter(HookToken token) {
        FilterRegistrationBean<HookAuthenticationFilter> registration =
                new FilterRegistrationBean<>(new HookAuthenticationFilter(token));
        registration.addUrlPatterns("/fhir-hook", "/fhir-hook/*");
        registration.setOrder(Ordered.HIGHEST_PRECEDENCE + 10);
        return registration;
    }
}
