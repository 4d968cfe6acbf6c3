package dev.twofold.trainer;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;

/**
 * The fitting core (data layout, split, objectives and solvers, metrics) stays plain Java (with the
 * JDK's Vector API, which has a scalar fallback) plus EJML: no database, HTTP, JSON or logging, so the service and a distributed engine can reuse it.
 */
class FittingCoreDependenciesTest {

    private static final List<String> CORE = List.of("data", "split", "fit", "evaluate", "parallel");
    private static final List<String> ALLOWED = List.of("java.", "jdk.incubator.vector.", "org.ejml.", "dev.twofold.trainer.data.",
            "dev.twofold.trainer.split.", "dev.twofold.trainer.fit.", "dev.twofold.trainer.evaluate.",
            "dev.twofold.trainer.parallel.");

    @Test
    void fitting_core_imports_only_java_and_ejml() throws IOException {
        Path root = Path.of("src/main/java/dev/twofold/trainer");
        List<String> offending = new ArrayList<>();
        int files = 0;
        for (String pkg : CORE) {
            try (Stream<Path> sources = Files.walk(root.resolve(pkg))) {
                for (Path source : sources.filter(p -> p.toString().endsWith(".java")).toList()) {
                    files++;
                    for (String line : Files.readAllLines(source)) {
                        String trimmed = line.trim();
                        if (trimmed.startsWith("import ")) {
                            String name = trimmed.substring("import ".length()).replace("static ", "");
                            if (ALLOWED.stream().noneMatch(name::startsWith)) {
                                offending.add(source + ": " + trimmed);
                            }
                        }
                        if (trimmed.contains("dev.twofold.db") || trimmed.contains("com.fasterxml") || trimmed.contains("org.slf4j")) {
                            offending.add(source + ": " + trimmed);
                        }
                    }
                }
            }
        }
        assertTrue(files > 20, "found the core sources (" + files + ")");
        assertEquals(List.of(), offending);
    }
}
