import './shared/base.css';
import { getPlant } from './shared/api.js';

const heading = document.getElementById('plant') as HTMLHeadingElement;
getPlant()
  .then((plant) => {
    heading.textContent = plant.name;
    document.title = `Heft — ${plant.name}`;
  })
  .catch(() => {});
