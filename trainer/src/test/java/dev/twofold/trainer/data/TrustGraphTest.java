package dev.twofold.trainer.data;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

class TrustGraphTest {

    @Test
    void out_edges_and_their_transpose_describe_the_same_graph() {
        TrustGraph g = TrustGraph.of(4, new int[] {2, 0, 0, 3}, new int[] {0, 3, 1, 0}, new float[] {0.5f, 1f, 0.25f, 0.75f});
        assertEquals(4, g.numEdges());
        assertArrayEquals(new int[] {0, 2, 2, 3, 4}, g.outStart());
        assertArrayEquals(new int[] {1, 3, 0, 0}, g.trustees());
        assertArrayEquals(new float[] {0.25f, 1f, 0.5f, 0.75f}, g.outWeights());
        assertArrayEquals(new int[] {0, 2, 3, 3, 4}, g.inStart());
        assertArrayEquals(new int[] {2, 3, 0, 0}, g.trusters());
        assertArrayEquals(new float[] {0.5f, 0.75f, 0.25f, 1f}, g.inWeights());
        assertEquals(2, g.inDegree(0));
        assertEquals(0, g.outDegree(1));
    }

    @Test
    void refuses_self_trust_repeated_edges_and_weights_outside_the_unit_interval() {
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> TrustGraph.of(3, new int[] {1}, new int[] {1}, new float[] {1f}));
        assertTrue(e.getMessage().contains("trusts themselves"), e.getMessage());
        e = assertThrows(IllegalArgumentException.class,
                () -> TrustGraph.of(3, new int[] {1, 1}, new int[] {2, 2}, new float[] {1f, 0.5f}));
        assertTrue(e.getMessage().contains("twice"), e.getMessage());
        e = assertThrows(IllegalArgumentException.class,
                () -> TrustGraph.of(3, new int[] {0}, new int[] {1}, new float[] {1.5f}));
        assertTrue(e.getMessage().contains("trust edge 0: weight 1.5 outside (0, 1]"), e.getMessage());
        e = assertThrows(IllegalArgumentException.class,
                () -> TrustGraph.of(3, new int[] {0}, new int[] {1}, new float[] {0f}));
        assertTrue(e.getMessage().contains("outside (0, 1]"), e.getMessage());
    }
}
