package dev.twofold.service.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

class IdIndexTest {

    private static final int MANY = 50_000;

    @Test
    void finds_every_id_at_its_index_and_nothing_else() {
        String[] ids = new String[MANY];
        for (int i = 0; i < MANY; i++) {
            ids[i] = i % 10 == 3 ? null : "cook-" + i;
        }
        IdIndex index = IdIndex.over(ids);
        for (int i = 0; i < MANY; i++) {
            if (ids[i] != null) {
                assertEquals(i, index.indexOf("cook-" + i));
            } else {
                assertEquals(-1, index.indexOf("cook-" + i));
            }
        }
        assertEquals(-1, index.indexOf("cook-" + MANY));
        assertEquals(-1, index.indexOf(""));
        assertEquals(MANY - MANY / 10, index.size());
        assertNull(index.id(3));
        assertEquals("cook-4", index.id(4));
    }

    @Test
    void ids_whose_hash_codes_collide_are_told_apart() {
        // "Aa" and "BB" have the same String.hashCode (2112), so every combination of them collides.
        String[] ids = {"AaAa", "AaBB", "BBAa", "BBBB"};
        assertEquals(ids[0].hashCode(), ids[3].hashCode());
        IdIndex index = IdIndex.over(ids);
        for (int i = 0; i < ids.length; i++) {
            assertEquals(i, index.indexOf(ids[i]));
        }
        assertEquals(-1, index.indexOf("AaAaAa"));
    }

    @Test
    void an_empty_directory_finds_nothing() {
        IdIndex index = IdIndex.over(new String[0]);
        assertEquals(-1, index.indexOf("anyone"));
        assertEquals(0, index.size());
    }

    @Test
    void a_repeated_id_is_refused_with_both_indices() {
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
                () -> IdIndex.over(new String[] {"soup", "cake", "soup"}));
        assertTrue(e.getMessage().contains("'soup'") && e.getMessage().contains("0") && e.getMessage().contains("2"),
                e.getMessage());
    }
}
