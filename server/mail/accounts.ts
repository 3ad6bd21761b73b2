// The e-mails about people's access: an invitation to join, and a password-reset link.
import { roleNames, type Role } from '../../schemas/auth';
import { linkMail, type Composed } from './compose';

const utc = (d: Date) => `${d.toISOString().slice(0, 16).replace('T', ' ')} UTC`;

export function invitationMail(input: { link: string; role: Role; invitedBy: string; expiresAt: Date }): Composed {
  return linkMail({
    subject: `${input.invitedBy} invited you to Heliodor`,
    link: input.link,
    action: 'Join the team',
    paragraphs: [
      `${input.invitedBy} invited you to the team on Heliodor, the console where your team provisions solar energy loggers, enrolls them on site and ships their firmware. Your role: ${roleNames[input.role]}.`,
      `Open the link to choose the name the team will see and your password. The link works once, until ${utc(input.expiresAt)} (72 hours).`,
    ],
    footnote: 'Not expecting this? Ignore this message: nothing happens until the link is opened.',
  });
}

export function passwordResetMail(input: { link: string; email: string; expiresAt: Date }): Composed {
  return linkMail({
    subject: 'Reset your Heliodor password',
    link: input.link,
    action: 'Choose a new password',
    paragraphs: [
      `Someone asked to reset the Heliodor password for ${input.email}. Open the link to choose a new one. The link works once, until ${utc(input.expiresAt)} (one hour).`,
      'Setting a new password signs you out wherever you are signed in. A second factor, if you have one, stays on.',
    ],
    footnote: 'Did not ask for this? Ignore this message: your password stays as it is.',
  });
}
