//! Cost per call of the gravity kernels (criterion): `cargo bench --bench kernels`.

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use ringsum::kernels::column::column_taylor;
use ringsum::kernels::{column_kernel, prism_kernel, prism_kernel_closed_form, ring_sector_kernel};

fn kernels(c: &mut Criterion) {
    let mut g = c.benchmark_group("kernels");
    g.bench_function("prism closed form, near", |b| {
        b.iter(|| {
            prism_kernel_closed_form(black_box(30.0), 60.0, -15.0, 15.0, 0.0, black_box(120.0))
        })
    });
    g.bench_function("prism, far (quadrature)", |b| {
        b.iter(|| {
            prism_kernel(
                black_box(3000.0),
                3030.0,
                -15.0,
                15.0,
                0.0,
                black_box(120.0),
            )
        })
    });
    g.bench_function("column", |b| {
        b.iter(|| column_kernel(black_box(3000.0), -0.7, black_box(120.0)))
    });
    g.bench_function("column Taylor terms", |b| {
        b.iter(|| column_taylor(black_box(3000.0), black_box(120.0), 1.0 / 6.371e6))
    });
    g.bench_function("ring sector", |b| {
        b.iter(|| ring_sector_kernel(black_box(0.4), 1000.0, 1250.0, -0.1, black_box(120.0)))
    });
    g.finish();
}

criterion_group!(benches, kernels);
criterion_main!(benches);
