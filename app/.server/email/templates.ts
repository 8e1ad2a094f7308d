// Plain, short messages. Each has a text part and an HTML part with the same link.

function escapeHtml(value: string): string {
  return value.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
}

function layout(heading: string, paragraphs: string[], action: { label: string; url: string }) {
  const text = [heading, "", ...paragraphs, "", `${action.label}: ${action.url}`, "", "— Flyball"].join("\n");
  const html = `<div style="font-family:Inter,system-ui,sans-serif;color:#1c1917;max-width:32rem">
<h1 style="font-size:18px">${escapeHtml(heading)}</h1>
${paragraphs.map((p) => `<p>${escapeHtml(p)}</p>`).join("\n")}
<p><a href="${escapeHtml(action.url)}" style="color:#0f5257;font-weight:600">${escapeHtml(action.label)}</a></p>
<p style="color:#78716c;font-size:12px">If the button does not work, copy this address: ${escapeHtml(action.url)}</p>
</div>`;
  return { text, html };
}

export function verificationEmail(name: string, url: string) {
  return {
    subject: "Confirm your e-mail address for Flyball",
    ...layout(`Hello ${name},`, ["Confirm this address to finish setting up your Flyball account."], {
      label: "Confirm e-mail address",
      url,
    }),
  };
}

export function passwordResetEmail(name: string, url: string) {
  return {
    subject: "Choose a new Flyball password",
    ...layout(
      `Hello ${name},`,
      ["Someone asked to reset the password of this Flyball account. If it was not you, ignore this message."],
      { label: "Choose a new password", url },
    ),
  };
}

export function invitationEmail(inviterName: string, organisationName: string, roleLabel: string, url: string) {
  return {
    subject: `${inviterName} invited you to ${organisationName} on Flyball`,
    ...layout(
      "You have been invited",
      [`${inviterName} invited you to join ${organisationName} on Flyball as ${roleLabel}.`],
      { label: "Accept the invitation", url },
    ),
  };
}

export function releaseHeldEmail(name: string, organisationName: string, gainSetVersion: number, reason: string, url: string) {
  return {
    subject: `Release of gain set v${gainSetVersion} is held (${organisationName})`,
    ...layout(
      `Hello ${name},`,
      [`The release of gain set v${gainSetVersion} stopped offering new gains and waits for your decision: resume it, or roll it back.`, `Why: ${reason}`],
      { label: "Open the release", url },
    ),
  };
}

export function paymentFailedEmail(organisationName: string, amount: string, url: string) {
  return {
    subject: `Payment for ${organisationName} on Flyball failed`,
    ...layout(
      "A payment did not go through",
      [
        `The payment of ${amount} for ${organisationName}'s Flyball subscription was declined.`,
        "Machines already running keep working, but registering machines and starting releases are paused until the invoice is paid. Update the card in the billing portal to pay it.",
      ],
      { label: "Open billing", url },
    ),
  };
}
