package dev.twofold.db.embedded;

import dev.twofold.db.connect.Database;
import dev.twofold.db.connect.DatabaseSettings;
import java.io.BufferedReader;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.ResultSet;
import java.sql.Statement;

/**
 * A second Twofold process for the embedded-server tests: opens the database on the data directory
 * given as argument, prints {@code url=JDBC_URL}, then obeys lines on stdin: {@code count} prints
 * {@code users=N}, {@code close} closes the database and exits.
 */
public final class JoiningProcess {

    private JoiningProcess() {
    }

    public static void main(String[] args) throws Exception {
        Database db = Database.open(DatabaseSettings.embedded(Path.of(args[0])));
        System.out.println("url=" + db.jdbcUrl());
        System.out.flush();
        BufferedReader in = new BufferedReader(new InputStreamReader(System.in, StandardCharsets.UTF_8));
        String line;
        while ((line = in.readLine()) != null) {
            if (line.equals("count")) {
                try (Connection c = db.dataSource().getConnection(); Statement s = c.createStatement();
                     ResultSet rs = s.executeQuery("select count(*) from users")) {
                    rs.next();
                    System.out.println("users=" + rs.getLong(1));
                }
            } else if (line.equals("close")) {
                db.close();
                System.out.println("closed");
                System.out.flush();
                return;
            }
            System.out.flush();
        }
        db.close();
    }
}
