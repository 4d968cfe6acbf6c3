package dev.twofold.launch;

import ch.qos.logback.core.PropertyDefinerBase;
import java.util.Locale;

/**
 * Chooses the log format for {@code logback.xml} from {@code TWOFOLD_LOG_FORMAT}: {@code text}
 * (the default, one readable line per event) or {@code json} (one JSON object per line, for log
 * collectors). Case and surrounding blanks do not matter. Any other value logs as text and says so
 * once on standard error, naming the setting, rather than leaving the process without logs.
 *
 * <p>Used as {@code <define name="LOG_FORMAT" class="dev.twofold.launch.LogFormat">} with the
 * raw value passed in {@code <value>${TWOFOLD_LOG_FORMAT:-}</value>}, so logback resolves it from
 * its context, system properties or the environment, in that order.
 */
public final class LogFormat extends PropertyDefinerBase {

    public static final String VARIABLE = "TWOFOLD_LOG_FORMAT";
    public static final String TEXT = "text";
    public static final String JSON = "json";

    private String value;

    /** The raw setting; blank or absent means the default. */
    public void setValue(String value) {
        this.value = value;
    }

    @Override
    public String getPropertyValue() {
        String chosen = choose(value);
        if (chosen == null) {
            System.err.println(VARIABLE + "='" + value.strip() + "' is not a log format; use " + TEXT
                    + " (the default) or " + JSON + "; logging as " + TEXT);
            return TEXT;
        }
        return chosen;
    }

    /** {@code text} or {@code json} for a valid setting (blank means text), null for anything else. */
    static String choose(String raw) {
        if (raw == null || raw.isBlank()) {
            return TEXT;
        }
        String v = raw.strip().toLowerCase(Locale.ROOT);
        return v.equals(TEXT) || v.equals(JSON) ? v : null;
    }
}
