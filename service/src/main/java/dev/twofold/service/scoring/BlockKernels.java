package dev.twofold.service.scoring;

/** Picks the fastest {@link BlockKernel} this JVM can run. */
final class BlockKernels {

    static final String VECTOR_MODULE = "jdk.incubator.vector";

    private static final BlockKernel BEST = choose();

    private BlockKernels() {
    }

    /** The SIMD kernel when the JVM resolved {@value #VECTOR_MODULE}, else the scalar one. */
    static BlockKernel best() {
        return BEST;
    }

    static boolean vectorAvailable() {
        return ModuleLayer.boot().findModule(VECTOR_MODULE).isPresent();
    }

    private static BlockKernel choose() {
        if (vectorAvailable()) {
            try {
                return new VectorBlockKernel();
            } catch (LinkageError | IllegalStateException e) {
                return new ScalarBlockKernel();
            }
        }
        return new ScalarBlockKernel();
    }
}
