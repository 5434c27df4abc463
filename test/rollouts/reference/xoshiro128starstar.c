/*
 * Reference outputs for test/rollouts/prng.test.ts: xoshiro128** 1.1 as published by Blackman and
 * Vigna (xoshiro128starstar.c), seeded from SplitMix64 (Steele, Lea and Flood; splitmix64.c), the
 * way server/src/analysis/rollouts.ts seeds it: SplitMix64 state = seed * 2^32 + episode, two
 * SplitMix64 outputs give the four 32-bit words (low half first). Build: gcc -O2 -o /tmp/x this.c
 */
#include <stdint.h>
#include <stdio.h>

static uint64_t sm_state;
static uint64_t splitmix64(void) {
  uint64_t z = (sm_state += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

static uint32_t s[4];
static inline uint32_t rotl(const uint32_t x, int k) { return (x << k) | (x >> (32 - k)); }
static uint32_t next(void) {
  const uint32_t result = rotl(s[1] * 5, 7) * 9;
  const uint32_t t = s[1] << 9;
  s[2] ^= s[0];
  s[3] ^= s[1];
  s[1] ^= s[2];
  s[0] ^= s[3];
  s[2] ^= t;
  s[3] = rotl(s[3], 11);
  return result;
}

static void seed_episode(uint32_t seed, uint32_t episode) {
  sm_state = ((uint64_t)seed << 32) | episode;
  uint64_t a = splitmix64(), b = splitmix64();
  s[0] = (uint32_t)a; s[1] = (uint32_t)(a >> 32); s[2] = (uint32_t)b; s[3] = (uint32_t)(b >> 32);
}

int main(void) {
  uint32_t cases[][2] = {{1, 0}, {1, 1}, {42, 7}, {4294967295u, 123456}};
  for (int c = 0; c < 4; c++) {
    seed_episode(cases[c][0], cases[c][1]);
    printf("seed %u episode %u:", cases[c][0], cases[c][1]);
    for (int i = 0; i < 6; i++) printf(" %u", next());
    printf("\n");
  }
  /* The published state {1, 2, 3, 4}, without SplitMix64. */
  s[0] = 1; s[1] = 2; s[2] = 3; s[3] = 4;
  printf("state 1 2 3 4:");
  for (int i = 0; i < 6; i++) printf(" %u", next());
  printf("\n");
  return 0;
}
