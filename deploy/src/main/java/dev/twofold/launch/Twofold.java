package dev.twofold.launch;

import dev.twofold.db.BadInputException;
import dev.twofold.db.TwofoldException;
import dev.twofold.db.access.KeysCommand;
import dev.twofold.db.access.RolesCommand;
import dev.twofold.db.ingest.ImportCommand;
import dev.twofold.db.ingest.UsersCommand;
import dev.twofold.service.ServeCommand;
import dev.twofold.trainer.planted.DemoDataCommand;
import dev.twofold.trainer.publish.ModelsCommand;
import dev.twofold.trainer.publish.TrainCommand;
import dev.twofold.trainer.sweep.SweepCommand;
import java.io.PrintWriter;
import picocli.CommandLine;
import picocli.CommandLine.Command;

/**
 * The {@code twofold} command line. Each command lives in the room that owns the work (import in
 * db, train in trainer, serve in service); this class only gathers them and maps failures to the
 * exit codes of the contract.
 */
@Command(
        name = "twofold",
        mixinStandardHelpOptions = true,
        versionProvider = Twofold.Version.class,
        description = "Recommendations from ratings coupled with trust: import, train, serve.",
        subcommands = {
            ServeCommand.class,
            ModelsCommand.class,
            ImportCommand.class,
            TrainCommand.class,
            DemoDataCommand.class,
            DemoCommand.class,
            KeysCommand.class,
            RolesCommand.class,
            UsersCommand.class,
            SweepCommand.class,
            CommandLine.HelpCommand.class,
        })
public final class Twofold {

    public static void main(String[] args) {
        System.exit(run(args));
    }

    /** Runs one command line and returns its exit code (0 ok, 2 usage, 65 bad data, 69 database, 75 locked, 1 other). */
    public static int run(String... args) {
        CommandLine cli = commandLine();
        return cli.execute(args);
    }

    static CommandLine commandLine() {
        CommandLine cli = new CommandLine(new Twofold());
        cli.setExecutionExceptionHandler(Twofold::onFailure);
        return cli;
    }

    private static int onFailure(Exception e, CommandLine cmd, CommandLine.ParseResult parsed) {
        PrintWriter err = cmd.getErr();
        if (e instanceof BadInputException bad) {
            err.print(bad.report());
        } else if (e instanceof TwofoldException t) {
            err.println("twofold " + cmd.getCommandName() + ": " + t.getMessage());
        } else {
            err.println("twofold " + cmd.getCommandName() + ": unexpected failure: " + e);
            e.printStackTrace(err);
        }
        err.flush();
        return e instanceof TwofoldException t ? t.exitCode() : TwofoldException.EXIT_SOFTWARE;
    }

    static final class Version implements CommandLine.IVersionProvider {
        @Override
        public String[] getVersion() {
            String v = Twofold.class.getPackage().getImplementationVersion();
            return new String[] {"twofold " + (v == null ? "development build" : v)};
        }
    }
}
