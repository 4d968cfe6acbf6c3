package dev.twofold.trainer.planted;

import dev.twofold.trainer.TrainerException;
import java.io.BufferedWriter;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.AtomicMoveNotSupportedException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * {@code twofold demo-data}: writes a generated cooking community as {@code ratings.csv}
 * ({@code user,item,rating,time}) and {@code trust.csv} ({@code truster,trustee,weight}), ready for
 * {@code twofold import}. Each file is written to a temporary name and moved into place, so a failed
 * run never leaves a half-written file behind.
 */
@Command(name = "demo-data", mixinStandardHelpOptions = true,
        description = "Write a generated cooking community (cooks rate recipes 1-5 and follow cooks whose taste they trust) as ratings.csv and trust.csv.")
public final class DemoDataCommand implements Callable<Integer> {

    @Spec
    CommandSpec spec;

    @Option(names = "--out", required = true, paramLabel = "DIR", description = "directory to write ratings.csv and trust.csv into (created if missing)")
    Path out;

    @Option(names = "--users", paramLabel = "N", description = "number of cooks (default: ${DEFAULT-VALUE})")
    int users = CommunitySpec.DEFAULT_COOKS;

    @Option(names = "--items", paramLabel = "N", description = "number of recipes (default: ${DEFAULT-VALUE})")
    int items = CommunitySpec.DEFAULT_RECIPES;

    @Option(names = "--seed", paramLabel = "S", description = "seed; the same seed gives the same files (default: ${DEFAULT-VALUE})")
    long seed = CommunitySpec.DEFAULT_SEED;

    @Option(names = "--one-decimal", description = "ratings with one decimal (3.7) instead of whole stars")
    boolean oneDecimal;

    @Override
    public Integer call() {
        CommunitySpec community;
        try {
            community = CommunitySpec.defaults().withSize(users, items).withSeed(seed).withWholeStars(!oneDecimal);
        } catch (IllegalArgumentException e) {
            throw new ParameterException(spec.commandLine(), "demo-data: " + e.getMessage());
        }
        PlantedCommunity data = CookingCommunity.generate(community);
        Path ratings = out.resolve("ratings.csv");
        Path trust = out.resolve("trust.csv");
        try {
            Files.createDirectories(out);
            writeAtomically(ratings, w -> writeRatings(data, w));
            writeAtomically(trust, w -> writeTrust(data, w));
        } catch (IOException e) {
            throw new TrainerException("could not write the demo data to " + out + ": " + e.getMessage()
                    + "; check that the directory is writable", e);
        }
        int newcomers = 0;
        for (int u = 0; u < data.numCooks(); u++) {
            if (data.isNewcomer(u)) {
                newcomers++;
            }
        }
        PrintWriter stdout = spec.commandLine().getOut();
        stdout.printf(Locale.ROOT, "wrote %,d ratings by %,d cooks of %,d recipes to %s%n", data.numRatings(),
                data.numCooks(), data.numRecipes(), ratings);
        stdout.printf(Locale.ROOT, "wrote %,d follows to %s%n", data.numFollows(), trust);
        stdout.printf(Locale.ROOT, "%,d newcomers have only 1-3 ratings; %d taste communities; seed %d%n", newcomers,
                community.communities(), seed);
        stdout.flush();
        return 0;
    }

    private interface Body {
        void write(BufferedWriter w) throws IOException;
    }

    private static void writeAtomically(Path target, Body body) throws IOException {
        Path tmp = Files.createTempFile(target.getParent(), target.getFileName().toString(), ".part");
        try {
            try (BufferedWriter w = Files.newBufferedWriter(tmp, StandardCharsets.UTF_8)) {
                body.write(w);
            }
            try {
                Files.move(tmp, target, StandardCopyOption.REPLACE_EXISTING, StandardCopyOption.ATOMIC_MOVE);
            } catch (AtomicMoveNotSupportedException e) {
                Files.move(tmp, target, StandardCopyOption.REPLACE_EXISTING);
            }
        } finally {
            Files.deleteIfExists(tmp);
        }
    }

    static void writeRatings(PlantedCommunity data, BufferedWriter w) throws IOException {
        w.write("user,item,rating,time\n");
        boolean whole = data.spec().wholeStars();
        for (int p = 0; p < data.numRatings(); p++) {
            w.write(data.cookId(data.ratingUser()[p]));
            w.write(',');
            w.write(data.recipeId(data.ratingItem()[p]));
            w.write(',');
            float r = data.rating()[p];
            w.write(whole ? Integer.toString((int) r) : String.format(Locale.ROOT, "%.1f", r));
            w.write(',');
            w.write(Long.toString(data.ratingTime()[p]));
            w.write('\n');
        }
    }

    static void writeTrust(PlantedCommunity data, BufferedWriter w) throws IOException {
        w.write("truster,trustee,weight\n");
        for (int e = 0; e < data.numFollows(); e++) {
            w.write(data.cookId(data.truster()[e]));
            w.write(',');
            w.write(data.cookId(data.trustee()[e]));
            w.write(',');
            float weight = data.trustWeight()[e];
            w.write(weight == 1f ? "1" : String.format(Locale.ROOT, "%.2f", weight));
            w.write('\n');
        }
    }
}
