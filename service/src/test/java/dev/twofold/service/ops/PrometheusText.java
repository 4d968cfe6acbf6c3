package dev.twofold.service.ops;

import java.util.ArrayList;
import java.util.Collections;
import java.util.HashMap;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeMap;
import java.util.function.Predicate;
import java.util.regex.Pattern;

/**
 * A strict reader of the Prometheus text exposition format, version 0.0.4, as the Prometheus
 * documentation ("Exposition formats", text-based format) defines it: {@code # HELP} and
 * {@code # TYPE} lines, then samples {@code name{label="value",...} value [timestamp]}, one per
 * line, each line ending in a line feed. Anything off-format throws with the line number, and so do
 * the rules a scraper relies on: one TYPE and one HELP per family, given before its samples; the
 * samples of a family together; no series twice; label values escaped only as {@code \\},
 * {@code \"} and {@code \n}; histogram buckets cumulative with a {@code +Inf} bucket equal to
 * {@code _count}.
 */
final class PrometheusText {

    private static final Pattern METRIC_NAME = Pattern.compile("[a-zA-Z_:][a-zA-Z0-9_:]*");
    private static final Pattern LABEL_NAME = Pattern.compile("[a-zA-Z_][a-zA-Z0-9_]*");
    private static final Set<String> TYPES = Set.of("counter", "gauge", "histogram", "summary", "untyped");

    /** One sample line. */
    record Sample(String name, Map<String, String> labels, double value) {

        String label(String key) {
            return labels.get(key);
        }
    }

    /** A metric family: its TYPE, HELP and samples (histogram and summary samples under their family name). */
    record Family(String name, String type, String help, List<Sample> samples) {
    }

    private final Map<String, Family> families;
    private final List<Sample> samples;

    private PrometheusText(Map<String, Family> families, List<Sample> samples) {
        this.families = families;
        this.samples = samples;
    }

    Map<String, Family> families() {
        return families;
    }

    /** Every sample name (including {@code _bucket}, {@code _count}, {@code _sum} suffixes). */
    Set<String> sampleNames() {
        Set<String> out = new HashSet<>();
        for (Sample s : samples) {
            out.add(s.name());
        }
        return out;
    }

    List<Sample> samples(String name) {
        List<Sample> out = new ArrayList<>();
        for (Sample s : samples) {
            if (s.name().equals(name)) {
                out.add(s);
            }
        }
        return out;
    }

    List<Sample> samples(String name, Predicate<Sample> where) {
        List<Sample> out = new ArrayList<>();
        for (Sample s : samples(name)) {
            if (where.test(s)) {
                out.add(s);
            }
        }
        return out;
    }

    /** The value of the one sample with this name whose labels include {@code labels}; throws unless exactly one. */
    double value(String name, String... labels) {
        List<Sample> found = samples(name, s -> hasLabels(s, labels));
        if (found.size() != 1) {
            throw new AssertionError(found.size() + " samples of " + name + " with labels " + List.of(labels)
                    + "; have " + samples(name));
        }
        return found.get(0).value();
    }

    static boolean hasLabels(Sample s, String... labels) {
        for (int j = 0; j + 1 < labels.length; j += 2) {
            if (!labels[j + 1].equals(s.labels().get(labels[j]))) {
                return false;
            }
        }
        return true;
    }

    static PrometheusText parse(String text) {
        if (!text.isEmpty() && !text.endsWith("\n")) {
            throw new IllegalArgumentException("the exposition does not end with a line feed");
        }
        Map<String, Family> families = new LinkedHashMap<>();
        Map<String, String> types = new HashMap<>();
        Map<String, String> helps = new HashMap<>();
        Set<String> closedFamilies = new HashSet<>();
        Set<String> seenSeries = new HashSet<>();
        List<Sample> all = new ArrayList<>();
        String currentFamily = null;
        String[] lines = text.split("\n", -1);
        for (int n = 0; n < lines.length - 1; n++) {
            String line = lines[n];
            int lineNo = n + 1;
            if (line.isEmpty()) {
                continue;
            }
            if (line.startsWith("#")) {
                String[] parts = line.split(" ", 4);
                if (parts.length >= 3 && (parts[1].equals("TYPE") || parts[1].equals("HELP"))) {
                    String name = parts[2];
                    require(METRIC_NAME.matcher(name).matches(), lineNo, "bad metric name '" + name + "'");
                    require(families.get(name) == null || families.get(name).samples().isEmpty(), lineNo,
                            parts[1] + " of " + name + " after its samples");
                    if (parts[1].equals("TYPE")) {
                        require(parts.length == 4 && TYPES.contains(parts[3]), lineNo, "bad TYPE line: " + line);
                        require(types.put(name, parts[3]) == null, lineNo, "second TYPE for " + name);
                    } else {
                        require(helps.put(name, parts.length == 4 ? unescapeHelp(parts[3], lineNo) : "") == null, lineNo,
                                "second HELP for " + name);
                    }
                    families.computeIfAbsent(name, k -> new Family(k, null, null, new ArrayList<>()));
                }
                continue; // other comments are allowed
            }
            Sample sample = sample(line, lineNo);
            String family = familyOf(sample.name(), types);
            if (!family.equals(currentFamily)) {
                require(!closedFamilies.contains(family), lineNo, "samples of " + family + " are not together");
                if (currentFamily != null) {
                    closedFamilies.add(currentFamily);
                }
                currentFamily = family;
            }
            String series = sample.name() + new TreeMap<>(sample.labels());
            require(seenSeries.add(series), lineNo, "series twice: " + series);
            families.computeIfAbsent(family, k -> new Family(k, null, null, new ArrayList<>())).samples().add(sample);
            all.add(sample);
        }
        Map<String, Family> typed = new LinkedHashMap<>();
        for (Family f : families.values()) {
            Family full = new Family(f.name(), types.getOrDefault(f.name(), "untyped"), helps.get(f.name()),
                    Collections.unmodifiableList(f.samples()));
            if (full.type().equals("histogram")) {
                checkHistogram(full);
            }
            if (full.type().equals("counter")) {
                for (Sample s : full.samples()) {
                    require(s.value() >= 0 || Double.isNaN(s.value()), 0, "negative counter " + s);
                }
            }
            typed.put(f.name(), full);
        }
        return new PrometheusText(typed, Collections.unmodifiableList(all));
    }

    private static String familyOf(String name, Map<String, String> types) {
        for (String suffix : List.of("_bucket", "_count", "_sum")) {
            if (name.endsWith(suffix)) {
                String base = name.substring(0, name.length() - suffix.length());
                String type = types.get(base);
                if ("histogram".equals(type) || "summary".equals(type)) {
                    return base;
                }
            }
        }
        return name;
    }

    private static void checkHistogram(Family f) {
        Map<Map<String, String>, List<Sample>> buckets = new LinkedHashMap<>();
        Map<Map<String, String>, Double> counts = new HashMap<>();
        for (Sample s : f.samples()) {
            if (s.name().equals(f.name() + "_bucket")) {
                require(s.labels().containsKey("le"), 0, "bucket without le: " + s);
                Map<String, String> key = new TreeMap<>(s.labels());
                key.remove("le");
                buckets.computeIfAbsent(key, k -> new ArrayList<>()).add(s);
            } else if (s.name().equals(f.name() + "_count")) {
                counts.put(new TreeMap<>(s.labels()), s.value());
            } else {
                require(s.name().equals(f.name() + "_sum"), 0, "unexpected sample " + s.name() + " in histogram "
                        + f.name());
            }
        }
        for (Map.Entry<Map<String, String>, List<Sample>> e : buckets.entrySet()) {
            double previousLe = Double.NEGATIVE_INFINITY;
            double previousCount = 0;
            Sample last = null;
            for (Sample b : e.getValue()) {
                double le = number(b.label("le"), 0);
                require(le > previousLe, 0, "buckets of " + f.name() + e.getKey() + " not in ascending le order");
                require(b.value() >= previousCount, 0, "buckets of " + f.name() + e.getKey() + " not cumulative");
                previousLe = le;
                previousCount = b.value();
                last = b;
            }
            require(last != null && last.label("le").equals("+Inf"), 0, "no +Inf bucket in " + f.name() + e.getKey());
            Double count = counts.get(e.getKey());
            require(count != null && count == last.value(), 0, "+Inf bucket of " + f.name() + e.getKey()
                    + " is not the _count");
        }
    }

    private static Sample sample(String line, int lineNo) {
        int j = 0;
        int n = line.length();
        while (j < n && line.charAt(j) != '{' && line.charAt(j) != ' ') {
            j++;
        }
        String name = line.substring(0, j);
        require(METRIC_NAME.matcher(name).matches(), lineNo, "bad metric name '" + name + "'");
        Map<String, String> labels = new LinkedHashMap<>();
        if (j < n && line.charAt(j) == '{') {
            j++;
            while (true) {
                require(j < n, lineNo, "unterminated label set");
                if (line.charAt(j) == '}') {
                    j++;
                    break;
                }
                int eq = line.indexOf('=', j);
                require(eq > j, lineNo, "label without '='");
                String label = line.substring(j, eq);
                require(LABEL_NAME.matcher(label).matches(), lineNo, "bad label name '" + label + "'");
                j = eq + 1;
                require(j < n && line.charAt(j) == '"', lineNo, "label value of " + label + " not quoted");
                j++;
                StringBuilder value = new StringBuilder();
                while (true) {
                    require(j < n, lineNo, "unterminated label value of " + label);
                    char c = line.charAt(j++);
                    if (c == '"') {
                        break;
                    }
                    if (c == '\\') {
                        require(j < n, lineNo, "dangling escape");
                        char e = line.charAt(j++);
                        switch (e) {
                            case '\\' -> value.append('\\');
                            case '"' -> value.append('"');
                            case 'n' -> value.append('\n');
                            default -> throw new IllegalArgumentException("line " + lineNo + ": bad escape \\" + e);
                        }
                    } else {
                        value.append(c);
                    }
                }
                require(labels.put(label, value.toString()) == null, lineNo, "label " + label + " twice");
                if (j < n && line.charAt(j) == ',') {
                    j++;
                }
            }
        }
        require(j < n && line.charAt(j) == ' ', lineNo, "no space before the value");
        String[] rest = line.substring(j + 1).split(" ");
        require(rest.length == 1 || rest.length == 2, lineNo, "value must be followed by at most a timestamp");
        double value = number(rest[0], lineNo);
        if (rest.length == 2) {
            try {
                Long.parseLong(rest[1]);
            } catch (NumberFormatException e) {
                throw new IllegalArgumentException("line " + lineNo + ": bad timestamp '" + rest[1] + "'");
            }
        }
        return new Sample(name, Collections.unmodifiableMap(labels), value);
    }

    private static double number(String text, int lineNo) {
        switch (text) {
            case "NaN":
                return Double.NaN;
            case "+Inf":
                return Double.POSITIVE_INFINITY;
            case "-Inf":
                return Double.NEGATIVE_INFINITY;
            default:
                require(text.matches("[-+]?([0-9]+(\\.[0-9]*)?|\\.[0-9]+)([eE][-+]?[0-9]+)?"), lineNo,
                        "bad number '" + text + "'");
                return Double.parseDouble(text);
        }
    }

    private static String unescapeHelp(String text, int lineNo) {
        StringBuilder out = new StringBuilder();
        for (int j = 0; j < text.length(); j++) {
            char c = text.charAt(j);
            if (c == '\\') {
                require(j + 1 < text.length(), lineNo, "dangling escape in HELP");
                char e = text.charAt(++j);
                switch (e) {
                    case '\\' -> out.append('\\');
                    case 'n' -> out.append('\n');
                    default -> throw new IllegalArgumentException("line " + lineNo + ": bad escape \\" + e + " in HELP");
                }
            } else {
                out.append(c);
            }
        }
        return out.toString();
    }

    private static void require(boolean ok, int lineNo, String problem) {
        if (!ok) {
            throw new IllegalArgumentException((lineNo > 0 ? "line " + lineNo + ": " : "") + problem);
        }
    }
}
