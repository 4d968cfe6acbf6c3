package dev.twofold.trainer.bench;

import java.util.HashMap;
import java.util.Map;

/** name=value arguments of a benchmark main. */
final class Args {

    private final Map<String, String> values = new HashMap<>();

    Args(String[] args) {
        for (String arg : args) {
            int eq = arg.indexOf('=');
            if (eq <= 0) {
                throw new IllegalArgumentException("argument '" + arg + "' is not name=value");
            }
            values.put(arg.substring(0, eq), arg.substring(eq + 1));
        }
    }

    int integer(String name, int fallback) {
        return values.containsKey(name) ? Integer.parseInt(values.get(name)) : fallback;
    }

    float real(String name, float fallback) {
        return values.containsKey(name) ? Float.parseFloat(values.get(name)) : fallback;
    }

    String text(String name, String fallback) {
        return values.getOrDefault(name, fallback);
    }
}
