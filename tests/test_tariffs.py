"""Carrier tariffs: chargeable weight, band look-up at the edges, price and rounding.

Expected values are worked by hand in the comments; the conventions checked come from the
trade's published worked examples, named beside each check. Tariff figures are invented inputs.
"""

from __future__ import annotations

import pytest

from costing.price.tariffs import chargeable_kg, charged_kg


def test_chargeable_weight_published_worked_example():
    # 3t-event.com "chargeable weight" worked example: 10 pallets of 1.2 x 1.0 x 1.8 m, 960 kg
    # each: gross 9,600 kg; volume 21.6 m3 x 333 = 7,192.8 kg; 5 ldm x 1,250 = 6,250 kg:
    # the chargeable weight is the largest, 9,600 kg (gross).
    assert chargeable_kg(9.6, 21.6, 5, 333, 1250) == pytest.approx(9600)
    assert 21.6 * 333 == pytest.approx(7192.8)


def test_light_bulky_goods_pay_on_volume():
    # logisticsglossary.com "measuring three times": on road, 1 m3 = 333 kg and the higher of
    # volume weight and actual weight is charged: 2 m3 of 400 kg is charged as 666 kg.
    assert chargeable_kg(0.4, 2.0, None, 333, 1750) == pytest.approx(666)


def test_unstackable_goods_pay_on_loading_metres():
    # scanfreight.no "weight and volume calculation": one euro pallet (1.2 x 0.8 m) takes
    # 0.4 loading metre on a 2.4 m wide trailer and, at 2,000 kg per loading metre, is charged
    # 800 kg: a 300 kg pallet that cannot be stacked pays for 800 kg.
    assert chargeable_kg(0.3, None, 0.4, 333, 2000) == pytest.approx(800)
    assert 1.2 * 0.8 / 2.4 == pytest.approx(0.4)


def test_heavy_dense_goods_pay_on_weight():
    # common practice, no source: steel coils, 24 t in 10 m3 on 3 ldm: weight decides
    assert chargeable_kg(24.0, 10.0, 3.0, 333, 1750) == 24000.0


def test_charged_kg_rounds_up_to_the_step():
    # hand-worked: 1,234 kg in 100 kg steps is 1,300 kg; 1,300 stays 1,300; 0.8 t is 800 kg
    # exactly even though 0.8 x 1000 is 800.0000000000001 in binary (the ROUND to 9 decimals)
    assert charged_kg(1234, 100) == 1300
    assert charged_kg(1300, 100) == 1300
    assert charged_kg(0.8 * 1000 + 1e-13, 100) == 800
    assert charged_kg(1234.5, None) == 1234.5
