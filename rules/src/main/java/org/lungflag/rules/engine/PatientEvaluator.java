package org.lungflag.rules.engine;

import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.TreeMap;
import java.util.TreeSet;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.timeline.AddResult;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Runs the engine for one patient as facts arrive in any order, so that results depend only on clinical time
 * (design invariant 2). New facts after the last evaluation point are evaluated as they come; a late fact (at or
 * before the last point, or before the clock was advanced) re-runs the evaluation from the checkpoint before it, and
 * the batch says which earlier evaluations it supersedes.
 *
 * <p>Checkpoints are kept every {@link EngineSettings#checkpointEvery()} evaluation points, plus the state before
 * the latest point (so values of one blood-gas panel arriving one by one cost one re-run each), and are bounded to
 * the timeline window. The oldest checkpoint is the horizon: a fact older than it is added to the timeline, later
 * points are re-run, but the points before the horizon are not (the batch says so). Not thread-safe; the service
 * serializes work per patient.
 */
public final class PatientEvaluator {

    /**
     * What one call produced.
     *
     * @param added what the timeline did with the facts ({@code null} for calls that add nothing)
     * @param supersedesAfter when not {@code null}, every evaluation emitted earlier with a clinical time after this
     *     instant is replaced by this batch's evaluations ({@link Instant#MIN} when all are)
     * @param beyondHorizon the change reached back before the oldest checkpoint; evaluation points before it were
     *     not re-run
     * @param evaluations in clinical order
     */
    public record Batch(
            AddResult added, Instant supersedesAfter, boolean beyondHorizon, List<RuleEvaluation> evaluations) {

        public Batch {
            evaluations = List.copyOf(evaluations);
        }

        static Batch empty(AddResult added) {
            return new Batch(added, null, false, List.of());
        }
    }

    private final RuleEngine engine;
    private final PatientTimeline timeline;
    private PatientFacts patient;

    /** The state now, including advances of the clock. */
    private EngineState current;
    /** The state right after the latest evaluation point (no advance applied). */
    private EngineState lastStep;
    /** The state after the point before the latest one, or null. */
    private EngineState previousStep;
    /** States after every k-th point, by the point's time; the first entry is the horizon. */
    private final TreeMap<Instant, EngineState> checkpoints = new TreeMap<>();

    private int steps;

    private PatientEvaluator(RuleEngine engine, PatientTimeline timeline, PatientFacts patient, EngineState start) {
        this.engine = Objects.requireNonNull(engine, "engine");
        this.timeline = Objects.requireNonNull(timeline, "timeline");
        this.patient = Objects.requireNonNull(patient, "patient");
        if (!timeline.patientId().equals(patient.patientId())
                || !timeline.patientId().equals(start.patientId())) {
            throw new IllegalArgumentException("timeline, patient facts and state must be for the same patient");
        }
        this.current = start;
        this.lastStep = start;
        this.checkpoints.put(key(start), start);
    }

    /** A new patient with no history. */
    public static PatientEvaluator start(RuleEngine engine, PatientTimeline timeline, PatientFacts patient) {
        return new PatientEvaluator(engine, timeline, patient, EngineState.initial(timeline.patientId()));
    }

    /**
     * Continues from a persisted state (after a restart): active episodes continue, none is started twice. The
     * timeline is the re-hydrated one; call {@link #catchUp()} to evaluate points after the persisted state.
     */
    public static PatientEvaluator resume(
            RuleEngine engine, PatientTimeline timeline, PatientFacts patient, EngineState persisted) {
        return new PatientEvaluator(engine, timeline, patient, persisted);
    }

    /**
     * Everything an evaluator holds besides its timeline, as plain records (JSON-friendly): with the same timeline,
     * {@link #resume(RuleEngine, PatientTimeline, PatientFacts, Resumable)} continues exactly as this evaluator
     * would, late data included. The service persists it, so an instance whose cached evaluator is stale (another
     * instance processed the patient) or gone (a restart) can still re-run from the checkpoint before a late fact.
     *
     * @param current the state now, advances included ({@link #state()})
     * @param lastStep the state right after the latest evaluation point
     * @param previousStep the state after the point before it, or {@code null}
     * @param checkpoints the checkpoints, oldest (the horizon) first
     * @param steps evaluation points stepped so far (sets the checkpoint cadence)
     */
    public record Resumable(
            EngineState current,
            EngineState lastStep,
            EngineState previousStep,
            List<Checkpoint> checkpoints,
            int steps) {

        public Resumable {
            Objects.requireNonNull(current, "current");
            Objects.requireNonNull(lastStep, "lastStep");
            checkpoints = List.copyOf(checkpoints);
            if (checkpoints.isEmpty()) {
                throw new IllegalArgumentException("a resumable evaluator has at least one checkpoint");
            }
        }
    }

    /** The state after the evaluation point at {@code at}; {@code at} is {@code null} for the state before any. */
    public record Checkpoint(Instant at, EngineState state) {}

    /** This evaluator's state and checkpoints, to resume it elsewhere or later. */
    public Resumable resumable() {
        List<Checkpoint> list = new ArrayList<>(checkpoints.size());
        for (Map.Entry<Instant, EngineState> e : checkpoints.entrySet()) {
            list.add(new Checkpoint(e.getKey().equals(Instant.MIN) ? null : e.getKey(), e.getValue()));
        }
        return new Resumable(current, lastStep, previousStep, list, steps);
    }

    /**
     * Continues exactly where {@code saved} was taken, over a timeline holding the same facts (e.g. rebuilt from the
     * service's store): late facts re-run from the checkpoint before them, as they would have in the original.
     */
    public static PatientEvaluator resume(
            RuleEngine engine, PatientTimeline timeline, PatientFacts patient, Resumable saved) {
        PatientEvaluator ev = new PatientEvaluator(engine, timeline, patient, saved.current());
        ev.lastStep = saved.lastStep();
        ev.previousStep = saved.previousStep();
        ev.checkpoints.clear();
        for (Checkpoint c : saved.checkpoints()) {
            ev.checkpoints.put(c.at() == null ? Instant.MIN : c.at(), c.state());
        }
        ev.steps = saved.steps();
        return ev;
    }

    private static Instant key(EngineState s) {
        return s.evaluatedUpTo() == null ? Instant.MIN : s.evaluatedUpTo();
    }

    public EngineState state() {
        return current;
    }

    public PatientTimeline timeline() {
        return timeline;
    }

    public List<Episode> activeEpisodes() {
        return current.activeEpisodes();
    }

    /** Offers the facts normalized from one resource version; a redelivery changes nothing. */
    public Batch offer(SourceRef source, List<? extends ClinicalFact> facts) {
        List<Instant> before = timeline.timesOf(source.resourceType(), source.id());
        AddResult result = timeline.addResource(source, facts);
        if (result == AddResult.DUPLICATE || result == AddResult.OUTSIDE_WINDOW) {
            return Batch.empty(result);
        }
        Instant earliest = null;
        // indexed loops: an iterator per offered resource showed up as the largest allocation of the evaluation path
        for (int i = 0; i < before.size(); i++) {
            Instant t = before.get(i);
            earliest = earliest == null || t.isBefore(earliest) ? t : earliest;
        }
        for (int i = 0; i < facts.size(); i++) {
            Instant t = facts.get(i).time();
            earliest = earliest == null || t.isBefore(earliest) ? t : earliest;
        }
        if (earliest == null) {
            return Batch.empty(result); // a resource that contributes no facts, before or now
        }
        Batch b = changedFrom(earliest, result);
        pruneCheckpoints();
        return b;
    }

    /** Convenience for a resource that yields one fact. */
    public Batch offer(ClinicalFact fact) {
        return offer(fact.source(), List.of(fact));
    }

    /** Removes a resource's facts (e.g. entered in error) and re-runs from the earliest of them. */
    public Batch retract(String resourceType, String id) {
        List<Instant> times = timeline.retract(resourceType, id);
        if (times.isEmpty()) {
            return Batch.empty(null);
        }
        return changedFrom(times.get(0), null);
    }

    /** The patient's demographic facts changed (e.g. a corrected birth date): re-runs from the horizon. */
    public Batch updatePatient(PatientFacts updated) {
        if (!updated.patientId().equals(patient.patientId())) {
            throw new IllegalArgumentException("patient facts are for another patient");
        }
        if (updated.equals(patient)) {
            return Batch.empty(null);
        }
        this.patient = updated;
        Map.Entry<Instant, EngineState> horizon = checkpoints.firstEntry();
        return rerun(horizon, !horizon.getKey().equals(Instant.MIN), null);
    }

    /** Evaluates every evaluation point after the current state (e.g. after {@link #resume}). */
    public Batch catchUp() {
        List<RuleEvaluation> out = new ArrayList<>();
        stepPoints(out);
        return new Batch(null, null, false, out);
    }

    /**
     * Moves clinical time on with no new data: episodes resolve or expire when their deadline is reached. The live
     * service calls this periodically with the current time; replay calls it once at the end.
     */
    public Batch advanceTo(Instant clinicalNow) {
        StepResult r = engine.advance(current, clinicalNow);
        current = r.next();
        return new Batch(null, null, false, r.evaluations());
    }

    // --- internals ---------------------------------------------------------------------------------------

    private Batch changedFrom(Instant earliest, AddResult result) {
        Instant evaluatedUpTo = lastStep.evaluatedUpTo();
        Instant clock = current.clock();
        if (evaluatedUpTo != null && !earliest.isAfter(evaluatedUpTo)) {
            // late: re-run from the checkpoint before it
            Map.Entry<Instant, EngineState> base = baseBefore(earliest);
            boolean beyond = base == null;
            if (beyond) {
                base = checkpoints.firstEntry();
            }
            return rerun(base, beyond, result);
        }
        List<RuleEvaluation> out = new ArrayList<>();
        Instant supersedes = null;
        if (clock != null && evaluatedUpTo != null && !earliest.isAfter(clock) && clock.isAfter(evaluatedUpTo)) {
            // earlier than the advanced clock: undo the advance, evaluate, advance again
            supersedes = evaluatedUpTo;
            current = lastStep;
        }
        stepPoints(out);
        if (supersedes != null) {
            reAdvance(clock, out);
        }
        return new Batch(result, supersedes, false, out);
    }

    private Map.Entry<Instant, EngineState> baseBefore(Instant t) {
        Map.Entry<Instant, EngineState> best = checkpoints.lowerEntry(t);
        if (previousStep != null) {
            Instant pk = key(previousStep);
            if (pk.isBefore(t) && (best == null || pk.isAfter(best.getKey()))) {
                best = Map.entry(pk, previousStep);
            }
        }
        return best;
    }

    private Batch rerun(Map.Entry<Instant, EngineState> base, boolean beyond, AddResult result) {
        Instant clock = current.clock();
        Instant baseKey = base.getKey();
        // checkpoints after the base are stale; the base itself is a checkpoint or the state before the last point
        checkpoints.tailMap(baseKey, false).clear();
        lastStep = base.getValue();
        previousStep = null;
        current = base.getValue();
        List<RuleEvaluation> out = new ArrayList<>();
        stepPoints(out);
        reAdvance(clock, out);
        return new Batch(result, baseKey, beyond, out);
    }

    private void reAdvance(Instant clock, List<RuleEvaluation> out) {
        if (clock != null && (current.clock() == null || clock.isAfter(current.clock()))) {
            StepResult r = engine.advance(current, clock);
            current = r.next();
            out.addAll(r.evaluations());
        }
    }

    /** Steps every evaluation point after the current state's last point, in clinical order. */
    private void stepPoints(List<RuleEvaluation> out) {
        Instant after = current.evaluatedUpTo();
        TreeSet<Instant> points = new TreeSet<>();
        for (QuantityKind k : engine.triggerKinds()) {
            timeline.timesAfter(k, after, points);
        }
        for (Instant p : points) {
            StepResult r = engine.step(current, timeline, patient, p);
            previousStep = lastStep;
            lastStep = r.next();
            current = r.next();
            steps++;
            if (steps % engine.settings().checkpointEvery() == 0) {
                checkpoints.put(p, r.next());
            }
            out.addAll(r.evaluations());
        }
    }

    /** Keeps checkpoints inside the timeline window, plus the newest one before it as the horizon. */
    private void pruneCheckpoints() {
        Instant windowStart = timeline.windowStart();
        if (windowStart == null) {
            return;
        }
        Instant floor = checkpoints.floorKey(windowStart);
        if (floor != null) {
            checkpoints.headMap(floor, false).clear();
        }
    }
}
