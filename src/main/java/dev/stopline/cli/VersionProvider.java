package dev.stopline.cli;

import picocli.CommandLine.IVersionProvider;

/** Version from the jar manifest, so that it never drifts from the build. */
public final class VersionProvider implements IVersionProvider {
    @Override
    public String[] getVersion() {
        String v = Main.class.getPackage().getImplementationVersion();
        return new String[] {"stopline " + (v == null ? "(development build)" : v)};
    }
}
