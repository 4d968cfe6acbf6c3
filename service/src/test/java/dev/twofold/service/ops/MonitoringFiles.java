package dev.twofold.service.ops;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeSet;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;

/**
 * The monitoring files shipped in {@code deploy/}: the Prometheus scrape configuration and alert
 * rules in {@code deploy/prometheus}, the dashboard definitions in {@code deploy/dashboards}, and
 * the PromQL expressions they hold.
 */
final class MonitoringFiles {

    /** Surefire runs in the module directory; deploy/ is beside it. */
    static final Path PROMETHEUS = Path.of("..", "deploy", "prometheus");
    static final Path DASHBOARDS = Path.of("..", "deploy", "dashboards");
    static final Path SCRAPE_CONFIG = PROMETHEUS.resolve("prometheus.yml");
    static final Path ALERT_RULES = PROMETHEUS.resolve("alerts.yml");

    /** Series of the exporters we ship; Prometheus's own (up, ...) are not ours to check. */
    private static final Pattern OUR_SERIES = Pattern.compile(
            "(?<![A-Za-z0-9_:])((?:twofold|hikaricp|jvm|process|system)_[A-Za-z0-9_]+)");
    private static final Pattern QUOTED = Pattern.compile("\"(?:[^\"\\\\]|\\\\.)*\"|'(?:[^'\\\\]|\\\\.)*'");

    private static final ObjectMapper YAML = new ObjectMapper(new YAMLFactory());
    private static final ObjectMapper JSON = new ObjectMapper();

    private MonitoringFiles() {
    }

    static JsonNode yaml(Path file) {
        try {
            return YAML.readTree(file.toFile());
        } catch (IOException e) {
            throw new UncheckedIOException("reading " + file, e);
        }
    }

    static JsonNode json(Path file) {
        try {
            return JSON.readTree(file.toFile());
        } catch (IOException e) {
            throw new UncheckedIOException("reading " + file, e);
        }
    }

    static List<Path> dashboards() {
        try (Stream<Path> files = Files.list(DASHBOARDS)) {
            return files.filter(f -> f.toString().endsWith(".json")).sorted().toList();
        } catch (IOException e) {
            throw new UncheckedIOException("listing " + DASHBOARDS, e);
        }
    }

    /** Every alert rule: name → PromQL expression. */
    static Map<String, String> alertExpressions() {
        Map<String, String> out = new java.util.LinkedHashMap<>();
        for (JsonNode group : yaml(ALERT_RULES).path("groups")) {
            for (JsonNode rule : group.path("rules")) {
                out.put(rule.path("alert").asText(), rule.path("expr").asText());
            }
        }
        return out;
    }

    /** Every PromQL expression of a dashboard: the {@code expr} fields anywhere in it. */
    static List<String> dashboardExpressions(Path file) {
        List<String> out = new ArrayList<>();
        collect(json(file), out);
        return out;
    }

    private static void collect(JsonNode node, List<String> out) {
        if (node.isObject()) {
            for (Map.Entry<String, JsonNode> field : node.properties()) {
                if (field.getKey().equals("expr") && field.getValue().isTextual()) {
                    out.add(field.getValue().asText());
                } else {
                    collect(field.getValue(), out);
                }
            }
        } else if (node.isArray()) {
            for (JsonNode element : node) {
                collect(element, out);
            }
        }
    }

    /** The series names of ours an expression reads (label values in quotes are not names). */
    static Set<String> seriesNames(String expr) {
        Set<String> out = new TreeSet<>();
        Matcher m = OUR_SERIES.matcher(QUOTED.matcher(expr).replaceAll("\"\""));
        while (m.find()) {
            out.add(m.group(1));
        }
        return out;
    }

    /** Null when brackets and quotes pair up, else what is wrong. */
    static String bracketProblem(String expr) {
        String bare = QUOTED.matcher(expr).replaceAll("\"\"");
        if (bare.indexOf('"') != bare.lastIndexOf('"') && bare.replace("\"\"", "").contains("\"")) {
            return "an unclosed quote";
        }
        StringBuilder open = new StringBuilder();
        for (char c : bare.toCharArray()) {
            switch (c) {
                case '(', '[', '{' -> open.append(c);
                case ')', ']', '}' -> {
                    char want = c == ')' ? '(' : c == ']' ? '[' : '{';
                    if (open.length() == 0 || open.charAt(open.length() - 1) != want) {
                        return "an unmatched '" + c + "'";
                    }
                    open.setLength(open.length() - 1);
                }
                default -> {
                }
            }
        }
        return open.length() == 0 ? null : "unclosed '" + open + "'";
    }
}
