package org.lungflag.rules.engine;

import java.util.Optional;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.index.IndexResult;
import org.lungflag.rules.pairing.PairedInputs;
import org.lungflag.rules.patient.PatientFacts;

/**
 * Computes the indices at one anchor from the paired inputs. The production provider wraps the index calculator;
 * tests may pass small doubles.
 */
@FunctionalInterface
public interface IndexProvider {

    /** The indices at one anchor. */
    interface Indices {
        /** The result for a code, or empty when the provider does not compute it. */
        Optional<IndexResult> get(IndexCode code);
    }

    Indices compute(PairedInputs inputs, PatientFacts patient);
}
