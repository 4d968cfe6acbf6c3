package dev.twofold.trainer.sweep;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.twofold.db.progress.Progress;
import dev.twofold.trainer.data.RatingMatrix;
import dev.twofold.trainer.data.TrustGraph;
import dev.twofold.trainer.evaluate.EvaluationSettings;
import dev.twofold.trainer.fit.AlsSolver;
import dev.twofold.trainer.fit.FitSettings;
import dev.twofold.trainer.fit.TrainingData;
import dev.twofold.trainer.planted.CommunitySpec;
import dev.twofold.trainer.planted.CookingCommunity;
import dev.twofold.trainer.planted.PlantedCommunity;
import dev.twofold.trainer.split.PerUserHoldout;
import dev.twofold.trainer.split.Split;
import java.io.ByteArrayInputStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import javax.xml.parsers.DocumentBuilderFactory;
import org.junit.jupiter.api.Test;
import org.w3c.dom.Document;

class SweepTest {

    @Test
    void every_setting_is_fitted_with_early_stopping_and_judged_on_the_validation_rows() {
        PlantedCommunity c = CookingCommunity.generate(CommunitySpec.defaults().withSize(300, 100).withSeed(4));
        int m = c.numCooks();
        int n = c.numRecipes();
        Split split = new PerUserHoldout(0.2, 9).split(m, c.ratingUser(), c.ratingItem(), null);
        RatingMatrix fit = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), split.train());
        RatingMatrix validation = RatingMatrix.of(m, n, c.ratingUser(), c.ratingItem(), c.rating(), split.test());
        TrainingData data = Sweep.withValidation(new TrainingData(fit, TrustGraph.of(m, c.truster(), c.trustee(),
                c.trustWeight()), null), validation, 1f, 5f);
        SweepResult result = Sweep.run(data, validation, new AlsSolver(), FitSettings.defaults().withEpochs(12)
                .withPatience(2), new int[] {2, 6}, new float[] {0.04f, 2f}, EvaluationSettings.defaults(1f, 5f), true,
                Progress.silent());
        assertEquals(4, result.points().size());
        SweepPoint heavy = result.points().get(1);
        assertEquals(2f, heavy.lambda());
        for (SweepPoint p : result.points()) {
            assertTrue(p.bestEpoch() >= 1 && p.bestEpoch() <= p.epochsRun() && p.epochsRun() <= 12, p.toString());
            assertTrue(p.validationRmse() > 0 && p.precision() >= 0 && p.precision() <= 1, p.toString());
        }
        // an enormous λ flattens the model: it must not be the choice
        assertTrue(result.best().lambda() == 0.04f, result.table());
        assertTrue(result.table().lines().filter(line -> line.endsWith(" *")).count() == 1, result.table());
    }

    @Test
    void the_choice_breaks_ties_towards_the_simpler_model() {
        SweepPoint small = new SweepPoint(4, 0.02f, 0.90003, 0.1, 5, 7, 1);
        SweepPoint big = new SweepPoint(16, 0.02f, 0.90000, 0.1, 5, 7, 1);
        SweepPoint worse = new SweepPoint(8, 0.08f, 0.95, 0.1, 5, 7, 1);
        SweepResult result = new SweepResult(List.of(big, worse, small), 10);
        assertSame(small, result.best(), "within the tie tolerance the smaller rank wins");
        assertTrue(result.why().startsWith("chose rank 4, lambda 0.02: lowest validation RMSE 0.9000 of 3 settings"),
                result.why());
    }

    @Test
    void csv_has_a_header_and_one_row_per_setting_and_the_plot_is_well_formed_svg() throws Exception {
        SweepResult result = new SweepResult(List.of(new SweepPoint(4, 0.02f, 0.91, 0.05, 7, 9, 1.5),
                new SweepPoint(8, 0.02f, 0.88, Double.NaN, 12, 14, 2.5), new SweepPoint(4, 0.1f, 0.93, 0.04, 3, 5, 1.0)),
                10);
        List<String> lines = result.csv().lines().toList();
        assertEquals("rank,lambda,validation_rmse,precision_at_k,k,best_epoch,epochs_run,seconds", lines.get(0));
        assertEquals("8,0.02,0.880000,,10,12,14,2.500", lines.get(2));
        assertEquals(4, lines.size());
        Document svg = DocumentBuilderFactory.newInstance().newDocumentBuilder()
                .parse(new ByteArrayInputStream(result.svg().getBytes(StandardCharsets.UTF_8)));
        assertEquals("svg", svg.getDocumentElement().getNodeName());
        assertEquals(4, svg.getElementsByTagName("polyline").getLength(), "one line per lambda in each of two panels");
        assertTrue(result.svg().contains("lambda 0.1"));
    }
}
