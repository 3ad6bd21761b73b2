import React from 'react';
import { Text, View } from 'react-native';
import { Page } from './shell';
import { Card, EmptyState, Notice } from './ui';
import { QueryView, type QueryState } from './query-state';
import { space, type } from './theme';
import { absoluteTime } from './format';
import type { OutboxMessage } from '../hooks/mailbox';

export function MailboxScreen({ state }: { state: QueryState<OutboxMessage[]> }) {
  return (
    <Page title="Mailbox" subtitle="Mail the console sent, as the local mail fake received it (not in production)">
      <Notice tone="slate" title="Development mailbox" detail="Nothing here left this machine. In production, mail goes to the SMTP server in the settings." />
      <QueryView state={state}>
        {(messages) =>
          messages.length === 0 ? (
            <EmptyState title="No mail yet" detail="Release stops and invitations will appear here." />
          ) : (
            <View style={{ gap: space.md }}>
              {messages.map((m, i) => (
                <Card key={`${m.sentAt}-${i}`}>
                  <Text style={type.heading}>{m.subject}</Text>
                  <Text style={type.small}>
                    To {m.to.join(', ')} · {absoluteTime(m.sentAt)}
                  </Text>
                  <Text style={type.body}>{m.text}</Text>
                </Card>
              ))}
            </View>
          )
        }
      </QueryView>
    </Page>
  );
}
