package dev.twofold.db.ingest;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import dev.twofold.db.progress.Progress;
import java.io.PrintWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine;

/**
 * {@code twofold import}: loads a ratings file, a trust file or both in one transaction, merging
 * them into what is stored ({@code --mode append}) or making the stored data exactly the files'
 * ({@code --mode replace}). A file that does not exist is a usage error (exit 2, nothing is read);
 * an invalid row refuses the whole import (exit 65, nothing is written). Progress goes to standard
 * error: a bar on a terminal, timestamped lines every few seconds in a log.
 */
@Command(name = "import", mixinStandardHelpOptions = true,
        description = {
            "Load ratings and/or trust edges from CSV files in one transaction.",
            "Ratings file header: user,item,rating[,time] (time: epoch seconds or ISO-8601 with Z or an offset).",
            "Trust file header: truster,trustee[,weight] (weight in (0,1], default 1).",
            "A later rating of the same user and item replaces the earlier one. Any invalid row refuses the whole"
                    + " import with FILE:LINE: reason lines (exit 65) and nothing is written.",
            "--mode append (default) merges: new pairs are added, stored pairs take the file's value (unless the stored"
                    + " rating has a later time), pairs not in the file stay; importing the same file twice changes nothing.",
            "--mode replace swaps: the stored ratings (with --ratings) and/or trust edges (with --trust) become exactly"
                    + " the file's rows, pairs not in the file are deleted, all in one transaction; a kind of data you give"
                    + " no file for is left as it is.",
            ""
        })
public final class ImportCommand implements Callable<Integer> {

    @Option(names = "--ratings", paramLabel = "FILE", description = "ratings CSV file")
    Path ratings;

    @Option(names = "--trust", paramLabel = "FILE", description = "trust CSV file")
    Path trust;

    @Option(names = "--scale", paramLabel = "MIN..MAX", defaultValue = "1..5", converter = ScaleConverter.class,
            description = "the rating scale; ratings outside it are refused (default: ${DEFAULT-VALUE})")
    RatingScale scale;

    @Option(names = "--mode", paramLabel = "MODE", defaultValue = "append",
            description = "append (merge into what is stored) or replace (the given kinds of data become exactly the"
                    + " files' rows) (default: ${DEFAULT-VALUE})")
    String mode;

    @Option(names = "--quiet", description = "no progress display on standard error")
    boolean quiet;

    @CommandLine.Spec
    CommandSpec spec;

    private final Map<String, String> environment;

    public ImportCommand() {
        this(System.getenv());
    }

    /** With an explicit environment (the {@code TWOFOLD_DB_*} variables), for tests and embedding. */
    public ImportCommand(Map<String, String> environment) {
        this.environment = environment;
    }

    @Override
    public Integer call() {
        if (ratings == null && trust == null) {
            throw new CommandLine.ParameterException(spec.commandLine(), "give --ratings FILE, --trust FILE or both");
        }
        ImportMode importMode;
        try {
            importMode = ImportMode.parse(mode);
        } catch (IllegalArgumentException e) {
            throw new CommandLine.ParameterException(spec.commandLine(), "--mode: " + e.getMessage());
        }
        requireFile("--ratings", ratings);
        requireFile("--trust", trust);
        DatabaseSettings settings = DatabaseSettings.fromEnvironment(environment);
        ImportReport report;
        try (Database db = Database.open(settings)) {
            report = new Importer(db, scale, quiet ? ImportProgress.NONE : ImportProgress.showing(Progress.forConsole("import")))
                    .importFiles(ratings, trust, importMode);
        }
        PrintWriter out = spec.commandLine().getOut();
        boolean replace = importMode == ImportMode.REPLACE;
        if (ratings != null) {
            out.printf(Locale.ROOT, "%s: %d rows read, %d ratings written%s%n", ratings, report.ratingsRead(),
                    report.ratingsWritten(), replace ? ", " + report.ratingsDeleted() + " not in the file deleted" : "");
        }
        if (trust != null) {
            out.printf(Locale.ROOT, "%s: %d rows read, %d trust edges written%s%n", trust, report.trustRead(),
                    report.trustWritten(), replace ? ", " + report.trustDeleted() + " not in the file deleted" : "");
        }
        out.printf(Locale.ROOT, "%d new users, %d new items; committed in %.1f s%n", report.newUsers(), report.newItems(),
                report.took().toNanos() / 1e9);
        out.flush();
        return 0;
    }

    private void requireFile(String option, Path file) {
        if (file != null && !Files.isRegularFile(file)) {
            throw new CommandLine.ParameterException(spec.commandLine(), option + " " + file
                    + (Files.exists(file) ? ": not a regular file" : ": no such file"));
        }
    }

    /** Parses {@code MIN..MAX}, for example {@code 1..5} or {@code 0.5..5}. */
    static final class ScaleConverter implements CommandLine.ITypeConverter<RatingScale> {
        @Override
        public RatingScale convert(String text) {
            int sep = text.indexOf("..");
            String usage = "'" + text + "' is not a scale; write MIN..MAX, for example 1..5 or 0.5..10";
            if (sep <= 0 || sep + 2 >= text.length()) {
                throw new CommandLine.TypeConversionException(usage);
            }
            String min = text.substring(0, sep).trim();
            String max = text.substring(sep + 2).trim();
            if (!FieldRules.isPlainDecimal(min) || !FieldRules.isPlainDecimal(max)) {
                throw new CommandLine.TypeConversionException(usage);
            }
            try {
                return new RatingScale(Float.parseFloat(min), Float.parseFloat(max));
            } catch (IllegalArgumentException e) {
                throw new CommandLine.TypeConversionException("scale '" + text + "' needs a finite MIN below MAX");
            }
        }
    }
}
