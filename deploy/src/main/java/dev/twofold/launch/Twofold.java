package dev.twofold.launch; public final class Twofold { public static void main(String[] a){} }
