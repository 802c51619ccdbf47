package org.lungflag.rules.catalog;

import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.snakeyaml.engine.v2.api.LoadSettings;
import org.snakeyaml.engine.v2.common.ScalarStyle;
import org.snakeyaml.engine.v2.composer.Composer;
import org.snakeyaml.engine.v2.exceptions.Mark;
import org.snakeyaml.engine.v2.exceptions.MarkedYamlEngineException;
import org.snakeyaml.engine.v2.exceptions.YamlEngineException;
import org.snakeyaml.engine.v2.nodes.MappingNode;
import org.snakeyaml.engine.v2.nodes.Node;
import org.snakeyaml.engine.v2.nodes.NodeTuple;
import org.snakeyaml.engine.v2.nodes.ScalarNode;
import org.snakeyaml.engine.v2.nodes.SequenceNode;
import org.snakeyaml.engine.v2.parser.ParserImpl;
import org.snakeyaml.engine.v2.scanner.StreamReader;

/**
 * A YAML node with its position, so every problem can be reported as {@code file:line:col}. A thin, read-only view
 * over snakeyaml-engine's composed node tree.
 */
final class YamlNode {

    enum Type {
        MAP,
        LIST,
        SCALAR
    }

    private final String file;
    private final String[] lines;
    private final Node node;

    private YamlNode(String file, String[] lines, Node node) {
        this.file = file;
        this.lines = lines;
        this.node = node;
    }

    /** Parses one YAML document; a syntax error becomes a located problem. */
    static YamlNode parse(String file, String text, Problems problems) {
        LoadSettings settings = LoadSettings.builder().setLabel(file).build();
        try {
            Composer composer = new Composer(settings, new ParserImpl(settings, new StreamReader(settings, text)));
            Optional<Node> root = composer.getSingleNode();
            if (root.isEmpty()) {
                problems.add(file, 1, 1, "the file is empty; a rule definition is a YAML mapping (id, version, ...)");
                return null;
            }
            return new YamlNode(file, text.split("\n", -1), root.get());
        } catch (MarkedYamlEngineException e) {
            Mark mark = e.getProblemMark().orElse(e.getContextMark().orElse(null));
            String problem = e.getProblem() == null ? e.getMessage() : e.getProblem();
            if (e.getContext() != null && e.getContextMark().isPresent()) {
                Mark c = e.getContextMark().get();
                problem += " (" + e.getContext() + " that starts at line " + (c.getLine() + 1) + ", column "
                        + (c.getColumn() + 1) + "; check quotes, brackets and indentation there)";
            }
            if (mark == null) {
                problems.add(file, 0, 0, "YAML syntax error: " + problem);
            } else {
                problems.add(file, mark.getLine() + 1, mark.getColumn() + 1, "YAML syntax error: " + problem);
            }
            return null;
        } catch (YamlEngineException e) {
            problems.add(file, 0, 0, "YAML syntax error: " + e.getMessage());
            return null;
        }
    }

    String file() {
        return file;
    }

    Type type() {
        if (node instanceof MappingNode) {
            return Type.MAP;
        }
        if (node instanceof SequenceNode) {
            return Type.LIST;
        }
        return Type.SCALAR;
    }

    /** 1-based line of the node's start. */
    int line() {
        return node.getStartMark().map(m -> m.getLine() + 1).orElse(0);
    }

    /** 1-based column of the node's start. */
    int column() {
        return node.getStartMark().map(m -> m.getColumn() + 1).orElse(0);
    }

    boolean isScalar() {
        return node instanceof ScalarNode;
    }

    String scalar() {
        return ((ScalarNode) node).getValue();
    }

    ScalarStyle scalarStyle() {
        return ((ScalarNode) node).getScalarStyle();
    }

    /** Mapping entries in document order: key text → (key node, value node). */
    Map<String, Entry> entries() {
        Map<String, Entry> out = new LinkedHashMap<>();
        for (NodeTuple t : ((MappingNode) node).getValue()) {
            YamlNode key = new YamlNode(file, lines, t.getKeyNode());
            String name = key.isScalar() ? key.scalar() : String.valueOf(t.getKeyNode());
            out.put(name, new Entry(key, new YamlNode(file, lines, t.getValueNode())));
        }
        return out;
    }

    /** Mapping keys that occur more than once (YAML allows them; a rule definition must not). */
    List<YamlNode> duplicateKeys() {
        List<YamlNode> dups = new ArrayList<>();
        java.util.Set<String> seen = new java.util.HashSet<>();
        for (NodeTuple t : ((MappingNode) node).getValue()) {
            YamlNode key = new YamlNode(file, lines, t.getKeyNode());
            if (key.isScalar() && !seen.add(key.scalar())) {
                dups.add(key);
            }
        }
        return dups;
    }

    List<YamlNode> items() {
        List<YamlNode> out = new ArrayList<>();
        for (Node n : ((SequenceNode) node).getValue()) {
            out.add(new YamlNode(file, lines, n));
        }
        return out;
    }

    /**
     * Maps a (1-based line, 0-based column) position inside this scalar's text to the file position, for plain,
     * quoted (without escapes), literal and folded block scalars. Other cases fall back to the scalar's start.
     */
    int[] positionOf(int textLine, int textColumn) {
        ScalarNode scalar = (ScalarNode) node;
        Mark start = scalar.getStartMark().orElse(null);
        if (start == null) {
            return new int[] {0, 0};
        }
        ScalarStyle style = scalar.getScalarStyle();
        if (style == ScalarStyle.PLAIN && textLine == 1) {
            return new int[] {start.getLine() + 1, start.getColumn() + 1 + textColumn};
        }
        if ((style == ScalarStyle.DOUBLE_QUOTED || style == ScalarStyle.SINGLE_QUOTED) && textLine == 1) {
            return new int[] {start.getLine() + 1, start.getColumn() + 2 + textColumn};
        }
        if (style == ScalarStyle.LITERAL) {
            // the content starts on the line after the indicator, indented like the first content line
            int contentLine = start.getLine() + textLine; // 0-based file line of the expression's line
            int first = start.getLine() + 1; // the block's indentation is that of its first content line
            int indent = first < lines.length ? leadingSpaces(lines[first]) : 0;
            return new int[] {contentLine + 1, indent + 1 + textColumn};
        }
        if (style == ScalarStyle.FOLDED && textLine == 1) {
            // folded lines were joined with single spaces: walk the file's content lines to find the column
            int remaining = textColumn;
            for (int l = start.getLine() + 1; l < lines.length; l++) {
                String content = lines[l].strip();
                if (content.isEmpty()) {
                    break;
                }
                if (remaining <= content.length()) {
                    return new int[] {l + 1, leadingSpaces(lines[l]) + 1 + remaining};
                }
                remaining -= content.length() + 1;
            }
        }
        return new int[] {start.getLine() + 1, start.getColumn() + 1};
    }

    private static int leadingSpaces(String line) {
        int n = 0;
        while (n < line.length() && line.charAt(n) == ' ') {
            n++;
        }
        return n;
    }

    record Entry(YamlNode key, YamlNode value) {}
}
