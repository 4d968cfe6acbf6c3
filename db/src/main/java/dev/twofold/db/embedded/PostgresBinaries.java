package dev.twofold.db.embedded;

import dev.twofold.db.DatabaseUnavailableException;
import java.io.BufferedInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.net.JarURLConnection;
import java.net.URL;
import java.net.URLConnection;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.nio.file.attribute.PosixFilePermission;
import java.util.EnumSet;
import java.util.Locale;
import java.util.Set;
import java.util.UUID;
import java.util.jar.JarEntry;
import org.apache.commons.compress.archivers.tar.TarArchiveEntry;
import org.apache.commons.compress.archivers.tar.TarArchiveInputStream;
import org.tukaani.xz.XZInputStream;

/**
 * The PostgreSQL server binaries shipped on the classpath as {@code postgres-linux-ARCH.txz} (a
 * Maven artifact), unpacked once into a directory of their own that outlives the JVM. The directory
 * name carries the archive's CRC and size, so a new PostgreSQL build unpacks beside the old one.
 * Unpacking goes to a temporary sibling that is renamed into place, so a crash half-way never
 * leaves a directory that looks complete.
 */
final class PostgresBinaries {

    private static final String COMPLETE_MARKER = ".complete";

    private PostgresBinaries() {
    }

    /** Unpacks the binaries under {@code root} unless already there; returns the directory holding {@code bin/}. */
    static Path unpack(Path root) {
        String resource = resourceName();
        URL url = PostgresBinaries.class.getClassLoader().getResource(resource);
        if (url == null) {
            throw new DatabaseUnavailableException("the embedded PostgreSQL binaries for this machine (" + resource
                    + ") are not on the classpath; set TWOFOLD_DB_URL to use an external PostgreSQL", null);
        }
        try {
            Path target = root.resolve("pg-" + fingerprint(url));
            if (Files.exists(target.resolve(COMPLETE_MARKER))) {
                return target;
            }
            Files.createDirectories(root);
            Path partial = root.resolve(".unpacking-" + UUID.randomUUID());
            try (InputStream in = new XZInputStream(new BufferedInputStream(url.openStream(), 1 << 16));
                 TarArchiveInputStream tar = new TarArchiveInputStream(in)) {
                extract(tar, partial);
                Files.createFile(partial.resolve(COMPLETE_MARKER));
            }
            try {
                Files.move(partial, target, StandardCopyOption.ATOMIC_MOVE);
            } catch (IOException raced) {
                // Another process unpacked the same archive first; theirs is as good as ours.
                deleteTree(partial);
                if (!Files.exists(target.resolve(COMPLETE_MARKER))) {
                    throw raced;
                }
            }
            return target;
        } catch (IOException e) {
            throw new DatabaseUnavailableException("could not unpack the embedded PostgreSQL binaries into " + root
                    + ": " + e.getMessage() + "; check that the directory is writable and the disk has about 60 MB free", e);
        }
    }

    private static String resourceName() {
        String arch = System.getProperty("os.arch", "").toLowerCase(Locale.ROOT);
        String name = switch (arch) {
            case "amd64", "x86_64" -> "x86_64";
            case "aarch64", "arm64" -> "arm_64";
            default -> arch;
        };
        return "postgres-linux-" + name + ".txz";
    }

    private static String fingerprint(URL url) throws IOException {
        URLConnection connection = url.openConnection();
        if (connection instanceof JarURLConnection jar) {
            jar.setUseCaches(false);
            JarEntry entry = jar.getJarEntry();
            return Long.toHexString(entry.getCrc()) + "-" + entry.getSize();
        }
        return Long.toHexString(connection.getLastModified()) + "-" + connection.getContentLengthLong();
    }

    private static void extract(TarArchiveInputStream tar, Path dest) throws IOException {
        Files.createDirectories(dest);
        Path root = dest.toAbsolutePath().normalize();
        TarArchiveEntry entry;
        while ((entry = tar.getNextEntry()) != null) {
            Path out = root.resolve(entry.getName()).normalize();
            if (!out.startsWith(root)) {
                throw new IOException("archive entry " + entry.getName() + " points outside the target directory");
            }
            if (entry.isDirectory()) {
                Files.createDirectories(out);
            } else if (entry.isSymbolicLink()) {
                Files.createDirectories(out.getParent());
                Files.createSymbolicLink(out, Path.of(entry.getLinkName()));
            } else if (entry.isLink()) {
                Files.createDirectories(out.getParent());
                Files.createLink(out, root.resolve(entry.getLinkName()).normalize());
            } else {
                Files.createDirectories(out.getParent());
                Files.copy(tar, out, StandardCopyOption.REPLACE_EXISTING);
                Files.setPosixFilePermissions(out, permissions(entry.getMode()));
            }
        }
    }

    private static Set<PosixFilePermission> permissions(int mode) {
        Set<PosixFilePermission> p = EnumSet.of(PosixFilePermission.OWNER_READ, PosixFilePermission.OWNER_WRITE,
                PosixFilePermission.GROUP_READ, PosixFilePermission.OTHERS_READ);
        if ((mode & 0111) != 0) {
            p.add(PosixFilePermission.OWNER_EXECUTE);
            p.add(PosixFilePermission.GROUP_EXECUTE);
            p.add(PosixFilePermission.OTHERS_EXECUTE);
        }
        return p;
    }

    static void deleteTree(Path dir) {
        if (!Files.exists(dir, java.nio.file.LinkOption.NOFOLLOW_LINKS)) {
            return;
        }
        try (var paths = Files.walk(dir)) {
            paths.sorted(java.util.Comparator.reverseOrder()).forEach(p -> {
                try {
                    Files.deleteIfExists(p);
                } catch (IOException e) {
                    throw new UncheckedIOException(e);
                }
            });
        } catch (IOException | UncheckedIOException e) {
            // Best effort: a leftover temporary directory is harmless.
        }
    }
}
