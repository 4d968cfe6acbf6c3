package dev.twofold.launch;

import dev.twofold.db.TwofoldException;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;

/** A command of the contract that this build does not have yet: it says so and exits 2. */
@Command(mixinStandardHelpOptions = true)
final class NotBuilt implements Callable<Integer> {

    record Spec(String name, String purpose) {
    }

    static final List<Spec> SPECS = List.of(
            new Spec("models", "list, show, promote and roll back model versions"));

    private final Spec what;

    @CommandLine.Spec
    CommandSpec commandSpec;

    @CommandLine.Unmatched
    List<String> ignored;

    NotBuilt(Spec what) {
        this.what = what;
    }

    @Override
    public Integer call() {
        commandSpec.commandLine().getErr().println("twofold " + what.name() + " (" + what.purpose()
                + ") is not built yet in this version; see the open issues.");
        return TwofoldException.EXIT_USAGE;
    }
}
