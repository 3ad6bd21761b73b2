// The fleet part of a logger's page, wired to its data: Why no update?, readings, notes, timeline.
// (A container, like the route files: it calls the hooks and hands data to the components.)
import React from 'react';
import { View } from 'react-native';
import { NoteForm, Readings, Timeline, WhyNoUpdate } from './fleet-logger';
import { space } from './theme';
import { useAddNote, useSparklines, useTimeline, useWhyNoUpdate } from '../hooks/fleet';

const DAYS = 7;

/** `canNote`: the logger's `can.addNote` (the server's policies say who writes notes); `timeZone`: its site's. */
export function LoggerFleet({ loggerId, canNote, timeZone }: { loggerId: string; canNote: boolean; timeZone?: string }) {
  const why = useWhyNoUpdate(loggerId);
  const sparklines = useSparklines(loggerId, DAYS);
  const timeline = useTimeline(loggerId);
  const note = useAddNote('loggers', loggerId);
  const [saved, setSaved] = React.useState(false);
  return (
    <View style={{ gap: space.lg }}>
      <WhyNoUpdate state={why} />
      <Readings state={sparklines} days={DAYS} />
      {canNote ? (
        <NoteForm
          busy={note.isPending}
          error={note.error}
          done={saved}
          onAdd={(text, clear) => {
            setSaved(false);
            note.mutate(text, {
              onSuccess: () => {
                clear();
                setSaved(true);
              },
            });
          }}
        />
      ) : null}
      <Timeline
        timeZone={timeZone}
        state={{
          pages: timeline.data?.pages ?? [],
          isPending: timeline.isPending,
          error: timeline.error,
          hasNextPage: timeline.hasNextPage,
          isFetchingNextPage: timeline.isFetchingNextPage,
          fetchNextPage: () => timeline.fetchNextPage(),
        }}
      />
    </View>
  );
}
