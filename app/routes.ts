import { type RouteConfig, index, layout, prefix, route } from "@react-router/dev/routes";

export default [
  index("routes/home.tsx"),
  route("sign-in", "routes/auth/sign-in.tsx"),
  route("sign-up", "routes/auth/sign-up.tsx"),
  route("sign-out", "routes/auth/sign-out.tsx"),
  route("resend-verification", "routes/auth/resend-verification.tsx"),
  route("forgot-password", "routes/auth/forgot-password.tsx"),
  route("reset-password", "routes/auth/reset-password.tsx"),
  route("invitations/:id", "routes/auth/invitation.tsx"),
  route("organisations/new", "routes/new-organisation.tsx"),

  route("o/:slug", "routes/org/layout.tsx", [
    index("routes/org/overview.tsx"),
    route("team", "routes/org/team.tsx"),
  ]),

  ...prefix("api", [
    route("auth/*", "routes/api/auth.ts"),
  ]),
] satisfies RouteConfig;
