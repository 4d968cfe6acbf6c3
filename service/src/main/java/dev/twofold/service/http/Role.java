package dev.twofold.service.http;

import io.javalin.security.RouteRole;

/** What a route needs from the caller: reading recommendations, writing data, or administering. */
public enum Role implements RouteRole {
    READ,
    WRITE,
    ADMIN
}
