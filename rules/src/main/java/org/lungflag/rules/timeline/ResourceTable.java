package org.lungflag.rules.timeline;

import java.util.Arrays;
import java.util.Objects;
import java.util.UUID;
import org.lungflag.rules.measure.SourceRef;

/**
 * The resources on one timeline (type, id, version, how many of their facts are kept), stored column-wise in
 * primitive arrays: numeric ids (the HAPI server's form) and canonical lowercase UUIDs are held as numbers, not
 * strings; resource types and small numeric versions are shared instances. A chained hash over slot numbers finds a
 * resource by type and id without building a key string.
 */
final class ResourceTable {

    private static final String[] KNOWN_TYPES = {"Observation", "Procedure", "Encounter", "Patient", "Device"};
    private static final int SHARED_VERSIONS = 4096;
    private static final String[] VERSION_STRINGS = new String[SHARED_VERSIONS + 1];

    private static final byte ID_TEXT = 0;
    private static final byte ID_DECIMAL = 1;
    private static final byte ID_UUID = 2;
    /** A text prefix shared through {@link #prefixTable} (index in idLow) followed by a canonical decimal. */
    private static final byte ID_PREFIXED = 3;

    private String[] prefixTable = new String[0];
    private String[] typeTable = new String[2];
    private int typeCount;

    private byte[] type = new byte[16];
    private byte[] idForm = new byte[16];
    private long[] idHigh = new long[16];
    /** Allocated when the first UUID id arrives. */
    private long[] idLow;
    /** Allocated when the first id that is neither decimal nor a canonical UUID arrives. */
    private String[] idText;

    private String[] version = new String[16];
    private short[] liveFacts = new short[16];
    private int[] hash = new int[16];
    /** Next slot in the same hash chain, or in the free list; -1 ends either. */
    private int[] next = new int[16];

    private int[] buckets = newBuckets(16);
    private int used; // slots ever handed out (high-water mark)
    private int size;
    private int free = -1;

    private static int[] newBuckets(int n) {
        int[] b = new int[n];
        Arrays.fill(b, -1);
        return b;
    }

    int size() {
        return size;
    }

    /** Number of slots reachable through the hash chains (equals {@link #size()} when consistent). */
    int chained() {
        int n = 0;
        for (int head : buckets) {
            for (int s = head; s >= 0; s = next[s]) {
                n++;
            }
        }
        return n;
    }

    /** The slot of a resource, or -1. */
    int find(String resourceType, String id) {
        int h = hashOf(resourceType, id);
        for (int s = buckets[h & (buckets.length - 1)]; s >= 0; s = next[s]) {
            if (hash[s] == h && matches(s, resourceType, id)) {
                return s;
            }
        }
        return -1;
    }

    /** Whether the slot holds this type and id. */
    boolean matches(int slot, String resourceType, String id) {
        if (!typeTable[type[slot]].equals(resourceType)) {
            return false;
        }
        switch (idForm[slot]) {
            case ID_DECIMAL -> {
                return decimalOrMinusOne(id) == idHigh[slot] && idHigh[slot] >= 0;
            }
            case ID_PREFIXED -> {
                int split = decimalTail(id);
                return split > 0
                        && decimalOrMinusOne(id.substring(split)) == idHigh[slot]
                        && id.regionMatches(0, prefixTable[(int) idLow[slot]], 0, split)
                        && prefixTable[(int) idLow[slot]].length() == split;
            }
            case ID_UUID -> {
                if (!isCanonicalUuid(id)) {
                    return false;
                }
                UUID uuid = UUID.fromString(id);
                return uuid.getMostSignificantBits() == idHigh[slot] && uuid.getLeastSignificantBits() == idLow[slot];
            }
            default -> {
                return id.equals(idText[slot]);
            }
        }
    }

    /** Adds a resource (it must not be present) and returns its slot. */
    int insert(String resourceType, String id, String resourceVersion) {
        int slot;
        if (free >= 0) {
            slot = free;
            free = next[slot];
        } else {
            if (used == type.length) {
                grow();
            }
            slot = used++;
        }
        type[slot] = typeIndex(resourceType);
        long decimal = decimalOrMinusOne(id);
        if (decimal >= 0) {
            idForm[slot] = ID_DECIMAL;
            idHigh[slot] = decimal;
        } else if (isCanonicalUuid(id)) {
            UUID uuid = UUID.fromString(id);
            if (idLow == null) {
                idLow = new long[type.length];
            }
            idForm[slot] = ID_UUID;
            idHigh[slot] = uuid.getMostSignificantBits();
            idLow[slot] = uuid.getLeastSignificantBits();
        } else if (decimalTail(id) > 0) {
            int split = decimalTail(id);
            if (idLow == null) {
                idLow = new long[type.length];
            }
            idForm[slot] = ID_PREFIXED;
            idHigh[slot] = decimalOrMinusOne(id.substring(split));
            idLow[slot] = prefixIndex(id.substring(0, split));
        } else {
            if (idText == null) {
                idText = new String[type.length];
            }
            idForm[slot] = ID_TEXT;
            idText[slot] = id;
        }
        version[slot] = shareVersion(resourceVersion);
        liveFacts[slot] = 0;
        int h = hashOf(resourceType, id);
        hash[slot] = h;
        if (size + 1 > buckets.length) {
            rehash(buckets.length * 2);
        }
        int b = h & (buckets.length - 1);
        next[slot] = buckets[b];
        buckets[b] = slot;
        size++;
        return slot;
    }

    void remove(int slot) {
        int b = hash[slot] & (buckets.length - 1);
        int prev = -1;
        for (int s = buckets[b]; s >= 0; prev = s, s = next[s]) {
            if (s == slot) {
                if (prev < 0) {
                    buckets[b] = next[s];
                } else {
                    next[prev] = next[s];
                }
                break;
            }
        }
        if (idText != null) {
            idText[slot] = null;
        }
        version[slot] = null;
        liveFacts[slot] = 0;
        next[slot] = free;
        free = slot;
        size--;
    }

    String type(int slot) {
        return typeTable[type[slot]];
    }

    String id(int slot) {
        return switch (idForm[slot]) {
            case ID_DECIMAL -> Long.toString(idHigh[slot]);
            case ID_UUID -> new UUID(idHigh[slot], idLow[slot]).toString();
            case ID_PREFIXED -> prefixTable[(int) idLow[slot]] + idHigh[slot];
            default -> idText[slot];
        };
    }

    String version(int slot) {
        return version[slot];
    }

    void setVersion(int slot, String resourceVersion) {
        version[slot] = shareVersion(resourceVersion);
    }

    SourceRef ref(int slot) {
        return new SourceRef(type(slot), id(slot), version[slot]);
    }

    int liveFacts(int slot) {
        return liveFacts[slot];
    }

    void addLive(int slot, int delta) {
        int n = liveFacts[slot] + delta;
        if (n < 0 || n > Short.MAX_VALUE) {
            throw new IllegalStateException("fact count out of range for " + ref(slot));
        }
        liveFacts[slot] = (short) n;
    }

    /**
     * Where a trailing canonical decimal (1–18 digits, no leading zero) starts after a non-empty prefix, e.g. 4 in
     * {@code obs-104233}; 0 when there is none.
     */
    static int decimalTail(String id) {
        int n = id.length();
        int i = n;
        while (i > 0 && n - i < 18 && Character.isDigit(id.charAt(i - 1)) && id.charAt(i - 1) < 128) {
            i--;
        }
        // skip leading zeros of the run: they belong to the prefix (keeps the round trip exact)
        while (i < n - 1 && id.charAt(i) == '0') {
            i++;
        }
        if (i == n || i == 0 || (id.charAt(i) == '0' && i < n - 1)) {
            return 0;
        }
        return i;
    }

    private int prefixIndex(String prefix) {
        for (int i = 0; i < prefixTable.length; i++) {
            if (prefixTable[i].equals(prefix)) {
                return i;
            }
        }
        prefixTable = Arrays.copyOf(prefixTable, prefixTable.length + 1);
        prefixTable[prefixTable.length - 1] = prefix;
        return prefixTable.length - 1;
    }

    private byte typeIndex(String resourceType) {
        for (int i = 0; i < typeCount; i++) {
            if (typeTable[i].equals(resourceType)) {
                return (byte) i;
            }
        }
        if (typeCount == Byte.MAX_VALUE) {
            throw new IllegalStateException("too many resource types on one timeline");
        }
        if (typeCount == typeTable.length) {
            typeTable = Arrays.copyOf(typeTable, typeCount * 2);
        }
        String shared = resourceType;
        for (String known : KNOWN_TYPES) {
            if (known.equals(resourceType)) {
                shared = known;
            }
        }
        typeTable[typeCount] = shared;
        return (byte) typeCount++;
    }

    private static String shareVersion(String v) {
        long n = decimalOrMinusOne(v);
        if (n < 0 || n > SHARED_VERSIONS) {
            return v;
        }
        String s = VERSION_STRINGS[(int) n];
        if (s == null) {
            s = Long.toString(n);
            VERSION_STRINGS[(int) n] = s; // benign race: equal strings
        }
        return s;
    }

    /** The value of a canonical decimal (no sign, no leading zero, at most 18 digits), else -1. */
    static long decimalOrMinusOne(String s) {
        if (s == null) {
            return -1;
        }
        int n = s.length();
        if (n == 0 || n > 18 || (n > 1 && s.charAt(0) == '0')) {
            return -1;
        }
        long v = 0;
        for (int i = 0; i < n; i++) {
            char c = s.charAt(i);
            if (c < '0' || c > '9') {
                return -1;
            }
            v = v * 10 + (c - '0');
        }
        return v;
    }

    static boolean isCanonicalUuid(String s) {
        if (s.length() != 36) {
            return false;
        }
        for (int i = 0; i < 36; i++) {
            char c = s.charAt(i);
            if (i == 8 || i == 13 || i == 18 || i == 23) {
                if (c != '-') {
                    return false;
                }
            } else if (!((c >= '0' && c <= '9') || (c >= 'a' && c <= 'f'))) {
                return false;
            }
        }
        return true;
    }

    private static int hashOf(String resourceType, String id) {
        int h = resourceType.hashCode() * 31 + Objects.hashCode(id);
        return h ^ (h >>> 16);
    }

    private void grow() {
        int n = type.length + (type.length >> 1) + 1;
        type = Arrays.copyOf(type, n);
        idForm = Arrays.copyOf(idForm, n);
        idHigh = Arrays.copyOf(idHigh, n);
        if (idLow != null) {
            idLow = Arrays.copyOf(idLow, n);
        }
        if (idText != null) {
            idText = Arrays.copyOf(idText, n);
        }
        version = Arrays.copyOf(version, n);
        liveFacts = Arrays.copyOf(liveFacts, n);
        hash = Arrays.copyOf(hash, n);
        next = Arrays.copyOf(next, n);
    }

    private void rehash(int n) {
        int[] b = newBuckets(n);
        // every live slot is in exactly one chain; walk the old chains
        for (int head : buckets) {
            int s = head;
            while (s >= 0) {
                int following = next[s];
                int nb = hash[s] & (n - 1);
                next[s] = b[nb];
                b[nb] = s;
                s = following;
            }
        }
        buckets = b;
    }
}
