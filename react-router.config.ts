import type { Config } from "@react-router/dev/config";

export default {
  ssr: true,
  // Lets parallel test runs build into folders of their own.
  buildDirectory: process.env.FLYBALL_BUILD_DIR ?? "build",
} satisfies Config;
