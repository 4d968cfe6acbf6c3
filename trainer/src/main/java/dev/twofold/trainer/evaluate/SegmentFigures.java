package dev.twofold.trainer.evaluate;

/** Figures over all users with held-out ratings, and over the cold ones (few training ratings). */
public record SegmentFigures(Figures overall, Figures cold) {

    SegmentFigures withRanking(SegmentFigures ranking) {
        return new SegmentFigures(overall.withRanking(ranking.overall), cold.withRanking(ranking.cold));
    }
}
