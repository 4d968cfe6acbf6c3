package dev.twofold.trainer.planted;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import picocli.CommandLine;

class DemoDataCommandTest {

    @TempDir
    Path dir;

    @Test
    void writes_ratings_and_trust_files_and_says_what_it_wrote() throws IOException {
        StringWriter out = new StringWriter();
        CommandLine cli = new CommandLine(new DemoDataCommand());
        cli.setOut(new PrintWriter(out));
        int code = cli.execute("--out", dir.resolve("demo").toString(), "--users", "300", "--items", "80", "--seed", "3");
        assertEquals(0, code);

        PlantedCommunity expected = CookingCommunity.generate(CommunitySpec.defaults().withSize(300, 80).withSeed(3));
        List<String> ratings = Files.readAllLines(dir.resolve("demo/ratings.csv"));
        List<String> trust = Files.readAllLines(dir.resolve("demo/trust.csv"));
        assertEquals("user,item,rating,time", ratings.get(0));
        assertEquals("truster,trustee,weight", trust.get(0));
        assertEquals(expected.numRatings() + 1, ratings.size());
        assertEquals(expected.numFollows() + 1, trust.size());
        assertTrue(ratings.get(1).matches("cook-\\d{5},recipe-\\d{4},[1-5],\\d+"), ratings.get(1));
        assertTrue(trust.get(1).matches("cook-\\d{5},cook-\\d{5},(1|0\\.50)"), trust.get(1));
        assertTrue(out.toString().contains(String.format(Locale.ROOT, "wrote %,d ratings", expected.numRatings())),
                out.toString());
        try (var files = Files.list(dir.resolve("demo"))) {
            assertEquals(2, files.count(), "no temporary files left behind");
        }
    }

    @Test
    void a_bad_size_is_a_usage_error_naming_the_setting() {
        StringWriter err = new StringWriter();
        CommandLine cli = new CommandLine(new DemoDataCommand());
        cli.setErr(new PrintWriter(err));
        int code = cli.execute("--out", dir.toString(), "--users", "1");
        assertEquals(2, code);
        assertTrue(err.toString().contains("cooks 1 outside 2.."), err.toString());
    }
}
