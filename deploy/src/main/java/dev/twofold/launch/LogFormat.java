package dev.twofold.launch;

import ch.qos.logback.classic.encoder.JsonEncoder;
import ch.qos.logback.classic.encoder.PatternLayoutEncoder;
import ch.qos.logback.classic.spi.ILoggingEvent;
import ch.qos.logback.core.encoder.Encoder;
import ch.qos.logback.core.encoder.EncoderBase;
import java.util.Locale;

/**
 * The log format chosen by {@code TWOFOLD_LOG_FORMAT}, as a logback encoder: {@code text} (the
 * default: one readable line per event, from {@link #setPattern the pattern}) or {@code json}
 * (one JSON object per line from logback's {@link JsonEncoder}: timestamp, level, thread, logger,
 * MDC, key-value pairs, formatted message, throwable). Case and surrounding blanks do not matter;
 * any other value logs as text and says so once on standard error, naming the setting, rather
 * than leaving the process without logs.
 *
 * <p>One encoder on one appender, so the configuration declares nothing it does not use (logback
 * would report an unused appender, and print its whole status on standard output).
 */
public final class LogFormat extends EncoderBase<ILoggingEvent> {

    public static final String VARIABLE = "TWOFOLD_LOG_FORMAT";
    public static final String TEXT = "text";
    public static final String JSON = "json";

    private String format;
    private String pattern = "%d{HH:mm:ss.SSS} %-5level %logger{24} - %msg%n";
    private Encoder<ILoggingEvent> delegate;

    /** The raw setting ({@code ${TWOFOLD_LOG_FORMAT:-}} in logback.xml); blank or absent means text. */
    public void setFormat(String format) {
        this.format = format;
    }

    /** The layout of a text line. */
    public void setPattern(String pattern) {
        this.pattern = pattern;
    }

    @Override
    public void start() {
        String chosen = choose(format);
        if (chosen == null) {
            System.err.println(VARIABLE + "='" + format.strip() + "' is not a log format; use " + TEXT
                    + " (the default) or " + JSON + "; logging as " + TEXT);
            chosen = TEXT;
        }
        if (chosen.equals(JSON)) {
            JsonEncoder json = new JsonEncoder();
            json.setWithSequenceNumber(false);
            json.setWithNanoseconds(false);
            json.setWithContext(false);
            json.setWithMessage(false);
            json.setWithArguments(false);
            json.setWithFormattedMessage(true);
            delegate = json;
        } else {
            PatternLayoutEncoder text = new PatternLayoutEncoder();
            text.setPattern(pattern);
            delegate = text;
        }
        delegate.setContext(getContext());
        delegate.start();
        super.start();
    }

    @Override
    public void stop() {
        if (delegate != null) {
            delegate.stop();
        }
        super.stop();
    }

    @Override
    public byte[] headerBytes() {
        return delegate.headerBytes();
    }

    @Override
    public byte[] encode(ILoggingEvent event) {
        return delegate.encode(event);
    }

    @Override
    public byte[] footerBytes() {
        return delegate.footerBytes();
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
