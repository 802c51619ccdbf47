package org.lungflag.service.replay;

import java.io.BufferedInputStream;
import java.io.BufferedOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.time.LocalDate;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.UnitRepair;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;

/**
 * Grouping by patient that does not hold the export in memory: what pass 1 reads is written, already normalized and
 * in a compact binary form, to one of N bucket files chosen by a range of a 64-bit hash of the patient id. Pass 2
 * reads one bucket at a time (a bucket holds about 1/N of the export), so the heap needed is bounded by the bucket
 * size, and N grows with the input. Because buckets are ranges of the hash, reading them in order and sorting each
 * by (hash, patient id) gives one order of patients that does not depend on N, on the input's line order or on how
 * it is split into files.
 */
final class Spill implements AutoCloseable {

    /** One record of a bucket. */
    sealed interface Entry permits PatientEntry, SpecimenEntry, ResourceEntry, DeferredEntry {
        String patientId();
    }

    record PatientEntry(PatientFacts facts) implements Entry {
        @Override
        public String patientId() {
            return facts.patientId();
        }
    }

    /** A Specimen whose subject is this patient (for Observations that reference it). */
    record SpecimenEntry(String patientId, String reference, SpecimenKind kind, Instant collectedAt) implements Entry {}

    /** One normalized resource version: its facts in canonical units, or a retraction. */
    record ResourceEntry(String patientId, SourceRef source, boolean retracted, List<ClinicalFact> facts)
            implements Entry {}

    /** An Observation that references a separate Specimen: normalized in pass 2, when every Specimen is known. */
    record DeferredEntry(String patientId, int file, long line, String json) implements Entry {}

    private final Path dir;
    private final DataOutputStream[] out;
    private final long[] records;

    Spill(Path dir, int buckets) throws IOException {
        this.dir = dir;
        this.out = new DataOutputStream[buckets];
        this.records = new long[buckets];
        for (int i = 0; i < buckets; i++) {
            out[i] = new DataOutputStream(new BufferedOutputStream(Files.newOutputStream(file(i)), 1 << 15));
        }
    }

    int buckets() {
        return out.length;
    }

    private Path file(int bucket) {
        return dir.resolve(String.format("bucket-%04d.bin", bucket));
    }

    /** FNV-1a, 64 bits, over the UTF-8 bytes of the id: stable across runs and JVMs. */
    static long hash(String patientId) {
        long h = 0xcbf29ce484222325L;
        for (byte b : patientId.getBytes(StandardCharsets.UTF_8)) {
            h ^= (b & 0xff);
            h *= 0x100000001b3L;
        }
        return h;
    }

    /** Patients ordered by hash, then id: the order of every output file. */
    static final Comparator<String> PATIENT_ORDER =
            Comparator.<String>comparingLong(Spill::hash).thenComparing(Comparator.naturalOrder());

    static int bucketOf(String patientId, int buckets) {
        long unsigned = hash(patientId) ^ Long.MIN_VALUE; // signed order of the hash = unsigned order of this
        long top = unsigned >>> 40; // its 24 high bits
        return (int) ((top * buckets) >>> 24);
    }

    void write(Entry e) throws IOException {
        int b = bucketOf(e.patientId(), out.length);
        DataOutputStream o = out[b];
        records[b]++;
        if (e instanceof PatientEntry p) {
            {
                o.writeByte('P');
                str(o, p.facts().patientId());
                o.writeByte(p.facts().sex().ordinal());
                LocalDate birth = p.facts().birthDate();
                o.writeBoolean(birth != null);
                if (birth != null) {
                    o.writeLong(birth.toEpochDay());
                }
            }
        } else if (e instanceof SpecimenEntry s) {
            {
                o.writeByte('S');
                str(o, s.patientId());
                str(o, s.reference());
                o.writeByte(s.kind().ordinal());
                instantOrNull(o, s.collectedAt());
            }
        } else if (e instanceof ResourceEntry r) {
            {
                o.writeByte('O');
                str(o, r.patientId());
                source(o, r.source());
                o.writeBoolean(r.retracted());
                o.writeInt(r.facts().size());
                for (ClinicalFact f : r.facts()) {
                    fact(o, f, r.source());
                }
            }
        } else if (e instanceof DeferredEntry d) {
            o.writeByte('D');
            str(o, d.patientId());
            o.writeInt(d.file());
            o.writeLong(d.line());
            str(o, d.json());
        }
    }

    /** Closes the writers; call before {@link #read}. */
    void finish() throws IOException {
        for (DataOutputStream o : out) {
            o.close();
        }
    }

    long records(int bucket) {
        return records[bucket];
    }

    /** Every record of one bucket, in the order written. */
    List<Entry> read(int bucket) throws IOException {
        List<Entry> entries = new ArrayList<>();
        try (DataInputStream in =
                new DataInputStream(new BufferedInputStream(Files.newInputStream(file(bucket)), 1 << 15))) {
            while (true) {
                int tag;
                try {
                    tag = in.readUnsignedByte();
                } catch (EOFException end) {
                    break;
                }
                switch (tag) {
                    case 'P' -> {
                        String id = str(in);
                        Sex sex = Sex.values()[in.readUnsignedByte()];
                        LocalDate birth = in.readBoolean() ? LocalDate.ofEpochDay(in.readLong()) : null;
                        entries.add(new PatientEntry(new PatientFacts(id, sex, birth)));
                    }
                    case 'S' ->
                        entries.add(new SpecimenEntry(
                                str(in), str(in), SpecimenKind.values()[in.readUnsignedByte()], instantOrNull(in)));
                    case 'O' -> {
                        String patient = str(in);
                        SourceRef source = source(in);
                        boolean retracted = in.readBoolean();
                        int n = in.readInt();
                        List<ClinicalFact> facts = new ArrayList<>(n);
                        for (int i = 0; i < n; i++) {
                            facts.add(fact(in, source));
                        }
                        entries.add(new ResourceEntry(patient, source, retracted, facts));
                    }
                    case 'D' -> entries.add(new DeferredEntry(str(in), in.readInt(), in.readLong(), str(in)));
                    default -> throw new IOException("bucket " + bucket + " is corrupt (record tag " + tag + ")");
                }
            }
        }
        Files.deleteIfExists(file(bucket));
        return entries;
    }

    @Override
    public void close() throws IOException {
        for (int i = 0; i < out.length; i++) {
            try {
                out[i].close();
            } catch (IOException ignored) {
                // already closed
            }
            Files.deleteIfExists(file(i));
        }
        Files.deleteIfExists(dir);
    }

    private static void fact(DataOutputStream o, ClinicalFact f, SourceRef resource) throws IOException {
        if (f instanceof Measurement m) {
            {
                o.writeByte(0);
                o.writeByte(m.kind().ordinal());
                o.writeDouble(m.value());
                instant(o, m.time());
                o.writeByte(m.role().ordinal());
                o.writeByte(m.specimen().ordinal());
                sourceUnlessSame(o, m.source(), resource);
                o.writeBoolean(m.original() != null);
                if (m.original() != null) {
                    o.writeDouble(m.original().value());
                    strOrNull(o, m.original().unit());
                }
                o.writeShort(m.repairs().size());
                for (UnitRepair r : m.repairs()) {
                    strOrNull(o, r.code());
                    strOrNull(o, r.description());
                }
            }
        } else if (f instanceof SupportState s) {
            {
                o.writeByte(1);
                o.writeByte(s.mode().ordinal());
                o.writeBoolean(s.flowLitresPerMinute() != null);
                if (s.flowLitresPerMinute() != null) {
                    o.writeDouble(s.flowLitresPerMinute());
                }
                instant(o, s.time());
                sourceUnlessSame(o, s.source(), resource);
            }
        } else if (f instanceof PositionState p) {
            o.writeByte(2);
            o.writeByte(p.position().ordinal());
            instant(o, p.time());
            sourceUnlessSame(o, p.source(), resource);
        }
    }

    private static ClinicalFact fact(DataInputStream in, SourceRef resource) throws IOException {
        int type = in.readUnsignedByte();
        switch (type) {
            case 0 -> {
                QuantityKind kind = QuantityKind.values()[in.readUnsignedByte()];
                double value = in.readDouble();
                Instant time = instant(in);
                ValueRole role = ValueRole.values()[in.readUnsignedByte()];
                SpecimenKind specimen = SpecimenKind.values()[in.readUnsignedByte()];
                SourceRef source = sourceUnlessSame(in, resource);
                OriginalQuantity original =
                        in.readBoolean() ? new OriginalQuantity(in.readDouble(), strOrNull(in)) : null;
                int n = in.readShort();
                List<UnitRepair> repairs = new ArrayList<>(n);
                for (int i = 0; i < n; i++) {
                    repairs.add(new UnitRepair(strOrNull(in), strOrNull(in)));
                }
                return new Measurement(kind, value, time, role, specimen, source, original, repairs);
            }
            case 1 -> {
                SupportMode mode = SupportMode.values()[in.readUnsignedByte()];
                Double flow = in.readBoolean() ? in.readDouble() : null;
                return new SupportState(mode, flow, instant(in), sourceUnlessSame(in, resource));
            }
            case 2 -> {
                BodyPosition position = BodyPosition.values()[in.readUnsignedByte()];
                return new PositionState(position, instant(in), sourceUnlessSame(in, resource));
            }
            default -> throw new IOException("a spilled fact is corrupt (type " + type + ")");
        }
    }

    private static void sourceUnlessSame(DataOutputStream o, SourceRef s, SourceRef resource) throws IOException {
        boolean same = s.equals(resource);
        o.writeBoolean(same);
        if (!same) {
            source(o, s);
        }
    }

    private static SourceRef sourceUnlessSame(DataInputStream in, SourceRef resource) throws IOException {
        return in.readBoolean() ? resource : source(in);
    }

    private static void source(DataOutputStream o, SourceRef s) throws IOException {
        str(o, s.resourceType());
        str(o, s.id());
        strOrNull(o, s.version());
    }

    private static SourceRef source(DataInputStream in) throws IOException {
        return new SourceRef(str(in), str(in), strOrNull(in));
    }

    private static void instant(DataOutputStream o, Instant t) throws IOException {
        o.writeLong(t.getEpochSecond());
        o.writeInt(t.getNano());
    }

    private static Instant instant(DataInputStream in) throws IOException {
        return Instant.ofEpochSecond(in.readLong(), in.readInt());
    }

    private static void instantOrNull(DataOutputStream o, Instant t) throws IOException {
        o.writeBoolean(t != null);
        if (t != null) {
            instant(o, t);
        }
    }

    private static Instant instantOrNull(DataInputStream in) throws IOException {
        return in.readBoolean() ? instant(in) : null;
    }

    private static void str(DataOutputStream o, String s) throws IOException {
        byte[] b = s.getBytes(StandardCharsets.UTF_8);
        o.writeInt(b.length);
        o.write(b);
    }

    private static String str(DataInputStream in) throws IOException {
        byte[] b = new byte[in.readInt()];
        in.readFully(b);
        return new String(b, StandardCharsets.UTF_8);
    }

    private static void strOrNull(DataOutputStream o, String s) throws IOException {
        o.writeBoolean(s != null);
        if (s != null) {
            str(o, s);
        }
    }

    private static String strOrNull(DataInputStream in) throws IOException {
        return in.readBoolean() ? str(in) : null;
    }
}
