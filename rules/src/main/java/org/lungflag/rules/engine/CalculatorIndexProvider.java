package org.lungflag.rules.engine;

import java.util.Objects;
import java.util.Optional;
import org.lungflag.rules.index.IndexCalculator;
import org.lungflag.rules.index.IndexSet;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.rules.pairing.PairedInputs;
import org.lungflag.rules.patient.PatientFacts;

/** The production index provider: every index from {@link IndexCalculator} with the site's parameters. */
public final class CalculatorIndexProvider implements IndexProvider {

    private final IndexCalculator calculator = new IndexCalculator();
    private final SiteParameters site;

    public CalculatorIndexProvider(SiteParameters site) {
        this.site = Objects.requireNonNull(site, "site");
    }

    @Override
    public Indices compute(PairedInputs inputs, PatientFacts patient) {
        IndexSet set = calculator.compute(inputs, patient, site);
        return code -> Optional.ofNullable(set.get(code));
    }
}
