package dev.twofold.service.http;

import java.nio.ByteBuffer;
import java.util.List;
import org.eclipse.jetty.http.HttpHeader;
import org.eclipse.jetty.server.Request;
import org.eclipse.jetty.server.Response;
import org.eclipse.jetty.server.handler.ErrorHandler;
import org.eclipse.jetty.util.Callback;

/**
 * Jetty's error output for failures that never reach a route (an unparsable URI, headers over
 * Jetty's size limit, ...), written as RFC 9457 problems like every other error of the API
 * instead of Jetty's HTML page.
 */
final class ProtocolProblems extends ErrorHandler {

    @Override
    public boolean handle(Request request, Response response, Callback callback) {
        int status = response.getStatus();
        Object message = request.getAttribute(ERROR_MESSAGE);
        String title = Problems.statusTitle(status);
        byte[] body = Problems.json(Problems.ABOUT_BLANK, title, status,
                message == null ? title : message.toString(), request.getHttpURI().getPath(), List.of());
        response.getHeaders().put(HttpHeader.CONTENT_TYPE, Problems.CONTENT_TYPE);
        response.write(true, ByteBuffer.wrap(body), callback);
        return true;
    }
}
