package dev.twofold.service.testing;

import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.net.InetAddress;
import java.net.Socket;
import java.nio.charset.StandardCharsets;
import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;

/**
 * One HTTP/1.1 exchange over a plain socket to 127.0.0.1, with the request target sent byte for
 * byte as given: what a hostile client can send and {@link java.net.URI} refuses to build (bad
 * percent escapes, raw dot segments, bytes that are not UTF-8).
 */
public final class RawHttp {

    private static final int TIMEOUT_MS = 30_000;

    /** Status, headers (lower-case names) and body of a response. */
    public record Response(int status, Map<String, String> headers, byte[] body) {
        public String bodyText() {
            return new String(body, StandardCharsets.UTF_8);
        }

        public String header(String name) {
            return headers.get(name.toLowerCase(Locale.ROOT));
        }
    }

    private RawHttp() {
    }

    /** Sends {@code method target} with an optional body (null for none) and reads the whole response. */
    public static Response exchange(int port, String method, byte[] target, String contentType, byte[] body) {
        try (Socket socket = new Socket(InetAddress.getLoopbackAddress(), port)) {
            socket.setSoTimeout(TIMEOUT_MS);
            OutputStream out = socket.getOutputStream();
            ByteArrayOutputStream request = new ByteArrayOutputStream();
            request.write((method + " ").getBytes(StandardCharsets.US_ASCII));
            request.write(target);
            StringBuilder head = new StringBuilder(" HTTP/1.1\r\nHost: 127.0.0.1:" + port + "\r\nConnection: close\r\n");
            if (body != null) {
                head.append("Content-Type: ").append(contentType).append("\r\nContent-Length: ").append(body.length).append("\r\n");
            }
            head.append("\r\n");
            request.write(head.toString().getBytes(StandardCharsets.US_ASCII));
            if (body != null) {
                request.write(body);
            }
            out.write(request.toByteArray());
            out.flush();
            return read(socket.getInputStream());
        } catch (IOException e) {
            throw new UncheckedIOException("exchange with 127.0.0.1:" + port, e);
        }
    }

    private static Response read(InputStream in) throws IOException {
        byte[] all = in.readAllBytes();
        int end = indexOf(all, "\r\n\r\n".getBytes(StandardCharsets.US_ASCII));
        if (end < 0) {
            throw new IOException("no complete response head in " + all.length + " bytes: "
                    + new String(all, StandardCharsets.ISO_8859_1));
        }
        String[] lines = new String(all, 0, end, StandardCharsets.ISO_8859_1).split("\r\n");
        int status = Integer.parseInt(lines[0].split(" ")[1]);
        Map<String, String> headers = new TreeMap<>();
        for (int i = 1; i < lines.length; i++) {
            int colon = lines[i].indexOf(':');
            headers.put(lines[i].substring(0, colon).trim().toLowerCase(Locale.ROOT), lines[i].substring(colon + 1).trim());
        }
        byte[] body = java.util.Arrays.copyOfRange(all, end + 4, all.length);
        if ("chunked".equalsIgnoreCase(headers.get("transfer-encoding"))) {
            body = dechunk(body);
        }
        return new Response(status, headers, body);
    }

    private static byte[] dechunk(byte[] chunked) throws IOException {
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        int at = 0;
        while (true) {
            int lineEnd = indexOf(java.util.Arrays.copyOfRange(chunked, at, chunked.length), "\r\n".getBytes(StandardCharsets.US_ASCII));
            if (lineEnd < 0) {
                throw new IOException("truncated chunked body");
            }
            String size = new String(chunked, at, lineEnd, StandardCharsets.US_ASCII).split(";")[0].trim();
            int n = Integer.parseInt(size, 16);
            at += lineEnd + 2;
            if (n == 0) {
                return out.toByteArray();
            }
            out.write(chunked, at, n);
            at += n + 2;
        }
    }

    private static int indexOf(byte[] data, byte[] pattern) {
        outer:
        for (int i = 0; i + pattern.length <= data.length; i++) {
            for (int j = 0; j < pattern.length; j++) {
                if (data[i + j] != pattern[j]) {
                    continue outer;
                }
            }
            return i;
        }
        return -1;
    }
}
